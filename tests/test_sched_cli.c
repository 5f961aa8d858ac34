/*
 * test_sched_cli.c - the `pacemap schedule` command end to end ($PM_BIN):
 * JSON keys of docs/schema.json (parsed by Python's json module, an outside
 * parser, when /usr/bin/python3 exists), --emit-map then --map gives the
 * same slots, errors with FILE:LINE:COL and exit codes, human output within
 * 100 columns, no output file left behind on error.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cmocka.h>

#include "support/testkit.h"

static char dir[] = "/tmp/pm_schedcli_XXXXXX";
static const char *bin;

static const char scenario[] =
    "# invented demonstration: a receive chain with a tracking loop\n"
    "clock 600MHz\nprocs 3\ncomm latency=20 per-word=1 send=2 recv=3\n"
    "node src cycles=10\nnode mixer cycles=20\nnode pd cycles=15\nnode lf cycles=10\n"
    "node nco cycles=25\nnode fir1 cycles=60\nnode fir2 cycles=60\nnode sink cycles=10\n"
    "edge src -> mixer -> pd -> lf -> nco words=4\nedge nco -> mixer delay=1\n"
    "edge mixer -> fir1 -> fir2 -> sink\nedge mixer -> fir2\n";

static void put(const char *name, const char *text)
{
    char path[256];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    fputs(text, f);
    fclose(f);
}

/* Run `pacemap ARGS` in dir with stdout/stderr to files; the exit status. */
static int run(const char *args)
{
    char cmd[1024];
    snprintf(cmd, sizeof cmd, "cd %s && %s %s > out.txt 2> err.txt", dir, bin, args);
    int st = system(cmd);
    return WIFEXITED(st) ? WEXITSTATUS(st) : -1;
}

static char *slurp(const char *name)
{
    return tk_slurp(dir, name);
}

static int setup(void **state)
{
    (void)state;
    bin = getenv("PM_BIN");
    if (!bin || access(bin, X_OK) != 0 || !mkdtemp(dir))
        return 0;
    put("rx.pace", scenario);
    return 0;
}

static int teardown(void **state)
{
    (void)state;
    char cmd[300];
    snprintf(cmd, sizeof cmd, "rm -rf %s", dir);
    return system(cmd) == 0 ? 0 : 0;
}

#define NEED_BIN()                                                                          \
    do {                                                                                    \
        if (!bin || access(bin, X_OK) != 0) {                                               \
            print_message("note: PM_BIN not set; command tests skipped\n");                 \
            skip();                                                                         \
        }                                                                                   \
    } while (0)

static void test_json_keys(void **state)
{
    (void)state;
    NEED_BIN();
    assert_int_equal(run("schedule rx.pace --json"), 0);
    if (system("test -x /usr/bin/python3") != 0)
        return;
    char cmd[512];
    snprintf(cmd, sizeof cmd,
             "/usr/bin/python3 -c 'import json,sys; d=json.load(open(sys.argv[1])); "
             "assert d[\"procs\"]==3; assert isinstance(d[\"makespan\"],int); "
             "assert len(d[\"map\"])==3 and sum(map(len,d[\"map\"]))==8; "
             "assert len(d[\"slots\"])==8; s=d[\"slots\"][0]; "
             "assert set(s)=={\"node\",\"core\",\"start\",\"end\"}; "
             "assert max(x[\"end\"] for x in d[\"slots\"])==d[\"makespan\"]' %s/out.txt", dir);
    assert_int_equal(system(cmd), 0); /* Python json module */
}

static void test_map_round_trip(void **state)
{
    (void)state;
    NEED_BIN();
    assert_int_equal(run("schedule rx.pace -p 2 --emit-map m.map --svg g.svg --json"), 0);
    char *first = slurp("out.txt");
    char *svg = slurp("g.svg");
    assert_non_null(svg);
    assert_non_null(strstr(svg, "</svg>"));
    assert_int_equal(run("schedule rx.pace -p 2 --map m.map --json"), 0);
    char *second = slurp("out.txt");
    char *a = strstr(first, "\"slots\""), *b = strstr(second, "\"slots\"");
    assert_non_null(a);
    assert_non_null(b);
    char *ae = strstr(a, "]"), *be = strstr(b, "]");
    assert_int_equal(ae - a, be - b);
    assert_memory_equal(a, b, (size_t)(ae - a));
    free(first);
    free(second);
    free(svg);
}

static void test_errors(void **state)
{
    (void)state;
    NEED_BIN();
    put("bad.map", "# hand map\ncore 0: src mixer pd lf\ncore 1: nco fir1 fir2 sink bogus\n");
    assert_int_equal(run("schedule rx.pace --map bad.map --emit-map never.map"), 1);
    char *err = slurp("err.txt");
    assert_non_null(strstr(err, "bad.map:3:28: error: unknown node 'bogus'"));
    free(err);
    char *none = slurp("never.map");
    assert_null(none);
    assert_int_equal(run("schedule rx.pace -p 0"), 2);
    assert_int_equal(run("schedule rx.pace --frobnicate"), 2);
    assert_int_equal(run("schedule rx.pace --svg no/such/dir/g.svg"), 1);
    assert_int_equal(run("schedule -h"), 0);
}

static void test_text_width(void **state)
{
    (void)state;
    NEED_BIN();
    assert_int_equal(run("schedule rx.pace"), 0);
    char *out = slurp("out.txt");
    assert_non_null(strstr(out, "makespan"));
    assert_non_null(strstr(out, "Caution"));
    for (char *line = out; *line;) {
        char *nl = strchr(line, '\n');
        assert_non_null(nl);
        assert_true(nl - line <= 100);
        line = nl + 1;
    }
    free(out);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_json_keys),
        cmocka_unit_test(test_map_round_trip),
        cmocka_unit_test(test_errors),
        cmocka_unit_test(test_text_width),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
