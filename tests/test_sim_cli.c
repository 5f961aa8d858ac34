/*
 * test_sim_cli.c - `pacemap simulate` end to end: a hand-worked scenario
 * through text and JSON, byte-identical output files on repeated runs, a
 * deadlock reported with exit status 1 and no file left behind, usage
 * errors with exit status 2.  Scenarios here are invented for the test.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>
#include <cmocka.h>

#include "support/testkit.h"

static char dir[] = "/tmp/pm_sim_cli_XXXXXX";

static const char *bin(void)
{
    static char path[4096];
    const char *b = getenv("PM_BIN");
    if (!path[0] && !realpath(b && *b ? b : "build/pacemap", path))
        snprintf(path, sizeof path, "%s", "build/pacemap");
    return path;
}

static void put(const char *name, const char *text)
{
    char path[256];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    fputs(text, f);
    fclose(f);
}

/* Run `pacemap simulate ARGS` in the temporary folder; returns the exit
 * status, stdout in *out (caller frees). */
static int run(const char *args, char **out)
{
    char cmd[1024];
    snprintf(cmd, sizeof cmd, "cd %s && %s simulate %s 2>stderr.txt", dir, bin(), args);
    FILE *p = popen(cmd, "r");
    assert_non_null(p);
    size_t cap = 1 << 16, len = 0;
    char *buf = malloc(cap);
    size_t k;
    while ((k = fread(buf + len, 1, cap - len - 1, p)) > 0)
        len += k;
    buf[len] = 0;
    int st = pclose(p);
    *out = buf;
    return WIFEXITED(st) ? WEXITSTATUS(st) : -1;
}

static char *slurp(const char *name)
{
    return tk_slurp(dir, name);
}

static int setup(void **state)
{
    (void)state;
    if (!mkdtemp(dir))
        return -1;
    /* one core, loop a -> b -> c -> a with one delay: a(3) b(5) c(2) run
     * back to back, so the period is 3 + 5 + 2 = 10 cycles (by hand) */
    put("loop.pace", "# invented for this test\nnode a cycles=3\nnode b cycles=5\n"
                     "node c cycles=2\nedge a -> b -> c\nedge c -> a delay=1\n");
    /* two cores that each need the other's token first: a deadlock */
    put("dead.pace", "# invented for this test\nprocs 2\nnode a cycles=1\nnode b cycles=1\n"
                     "edge a -> b\nedge b -> a\n");
    put("dead.map", "core 0: a\ncore 1: b\n");
    return 0;
}

static int teardown(void **state)
{
    (void)state;
    char cmd[512];
    snprintf(cmd, sizeof cmd, "rm -rf %s", dir);
    return system(cmd) == 0 ? 0 : -1;
}

static void test_cli_json_hand_case(void **state)
{
    (void)state;
    char *out;
    assert_int_equal(run("loop.pace -n 50 --json", &out), 0);
    assert_non_null(strstr(out, "\"period\": {\n    \"num\": 10,\n    \"den\": 1"));
    assert_non_null(strstr(out, "\"iterations\": 50"));
    assert_non_null(strstr(out, "\"latency\": 10"));
    assert_non_null(strstr(out, "\"utilisation\": [\n    1\n  ]"));
    assert_non_null(strstr(out, "\"max_tokens\": []"));
    free(out);
    assert_int_equal(run("loop.pace -n 50", &out), 0);
    assert_non_null(strstr(out, "period         10 cycles per iteration (10/1)"));
    assert_non_null(strstr(out, "Caution:"));
    for (char *line = out; line && *line; line = strchr(line, '\n') ? strchr(line, '\n') + 1 : NULL) {
        char *nl = strchr(line, '\n');
        size_t len = nl ? (size_t)(nl - line) : strlen(line);
        assert_true(len <= 100);
    }
    free(out);
}

static void test_cli_files_repeatable(void **state)
{
    (void)state;
    char *out;
    assert_int_equal(run("loop.pace -n 20 --vcd a.vcd --svg a.svg --json", &out), 0);
    char *j1 = out;
    assert_int_equal(run("loop.pace -n 20 --vcd b.vcd --svg b.svg --json", &out), 0);
    assert_string_equal(j1, out);
    free(j1), free(out);
    char *v1 = slurp("a.vcd"), *v2 = slurp("b.vcd"), *s1 = slurp("a.svg"), *s2 = slurp("b.svg");
    assert_non_null(v1), assert_non_null(v2), assert_non_null(s1), assert_non_null(s2);
    assert_string_equal(v1, v2);
    assert_string_equal(s1, s2);
    assert_non_null(strstr(v1, "$enddefinitions $end"));
    assert_non_null(strstr(s1, "<svg"));
    free(v1), free(v2), free(s1), free(s2);
}

static void test_cli_deadlock(void **state)
{
    (void)state;
    char *out;
    assert_int_equal(run("dead.pace --map dead.map --vcd d.vcd", &out), 1);
    free(out);
    char *err = slurp("stderr.txt");
    /* at the map file's line that lists a node of the loop, naming the loop */
    assert_non_null(strstr(err, "dead.map:1:9: error: the map deadlocks"));
    assert_non_null(strstr(err, "a -> b -> a"));
    free(err);
    char *vcd = slurp("d.vcd");
    assert_null(vcd); /* no output file on error */
    /* one core running b before a, though a feeds b in the same round:
     * the core order closes the loop a -> b -> a; b is at line 2, col 9 */
    put("order.pace", "# invented for this test\nnode a cycles=1\nnode b cycles=1\n"
                      "node c cycles=1\nedge a -> b\nedge b -> c\nedge c -> a delay=1\n");
    put("order.map", "# b listed too early\ncore 0: b a c\n");
    assert_int_equal(run("order.pace --map order.map", &out), 1);
    free(out);
    err = slurp("stderr.txt");
    assert_non_null(strstr(err, "order.map:2:9: error: the map deadlocks"));
    assert_non_null(strstr(err, "a -> b -> a (core 0 lists 'b' before 'a')"));
    free(err);
}

static void test_cli_usage(void **state)
{
    (void)state;
    char *out;
    assert_int_equal(run("", &out), 2);
    free(out);
    assert_int_equal(run("loop.pace --fifo", &out), 2);
    free(out);
    assert_int_equal(run("loop.pace -n 0", &out), 2);
    free(out);
    assert_int_equal(run("-h", &out), 0);
    assert_non_null(strstr(out, "--fifo"));
    free(out);
}

int main(void)
{
    if (access(bin(), X_OK) != 0) {
        printf("note: %s not built; command tests skipped\n", bin());
        return 0;
    }
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_cli_json_hand_case),
        cmocka_unit_test(test_cli_files_repeatable),
        cmocka_unit_test(test_cli_deadlock),
        cmocka_unit_test(test_cli_usage),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
