/*
 * test_fuzz_regress.c - replays every input under tests/fuzz/regress/
 * through both fuzz targets' paths: the scenario reader, and the map reader
 * against the two fixed graphs of tests/fuzz/fuzz_graphs.h, each followed by
 * the same analyses the fuzzers run (tests/fuzz/fuzz_exercise.h).  So a bug
 * a fuzzer once found stays fixed in every `make test` and `make asan`.
 *
 * Each input must give either success with a result or a clean error: a
 * negative PM_E* code, no result, a non-empty one-line message.  A broken
 * contract aborts (the test fails); crashes, leaks and undefined behaviour
 * are caught by `make asan`.  Inputs named hand-* were written by hand for
 * edges the fuzzers reach slowly; the others are fuzzer finds.  Inputs named
 * known-* reproduce a bug reported to the owner of the file and not fixed
 * yet: they are replayed only with PM_FUZZ_KNOWN=1 (a note says so); rename
 * the file without the prefix once the fix lands.
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "fuzz/fuzz_common.h"
#include "fuzz/fuzz_exercise.h"
#include "fuzz/fuzz_graphs.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/reader.h"

#define REGRESS_DIR "tests/fuzz/regress"
#define REGRESS_MAX (FUZZ_MAX_INPUT + 1)

typedef struct regress_input {
    char path[512];
    char *data;
    size_t len;
} regress_input;

/* Read a whole file; fails the test when it cannot. */
static void regress_load(regress_input *in, const char *name)
{
    snprintf(in->path, sizeof in->path, "%s/%s", REGRESS_DIR, name);
    FILE *f = fopen(in->path, "rb");
    assert_non_null(f);
    in->data = malloc(REGRESS_MAX);
    assert_non_null(in->data);
    in->len = fread(in->data, 1, REGRESS_MAX, f);
    assert_int_equal(ferror(f), 0);
    fclose(f);
}

/* The scenario reader's path of fuzz_scenario.c. */
static void regress_scenario(const regress_input *in)
{
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_reader_read_string(in->data, in->len, in->path, &g, &d);
    if (rc != PM_OK) {
        fuzz_check_diag(rc, g, &d);
        return;
    }
    assert_non_null(g);
    fuzz_exercise_graph(g, 1 + (uint32_t)(in->len % 4));
}

/* The map reader's path of fuzz_map.c, against one fixed graph. */
static void regress_map(const regress_input *in, const pm_graph *g)
{
    pm_map *m = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_map_read_string(in->data, in->len, in->path, g, &m, &d);
    if (rc != PM_OK) {
        fuzz_check_diag(rc, m, &d);
        return;
    }
    assert_non_null(m);
    fuzz_exercise_map(m, g);
}

static pm_graph *regress_graph(const char *text, size_t len)
{
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    assert_int_equal(pm_reader_read_string(text, len, "fuzz.pace", &g, &d), PM_OK);
    return g;
}

static void test_regress_all(void **state)
{
    (void)state;
    pm_graph *classes = regress_graph(fuzz_classes_scenario, sizeof fuzz_classes_scenario - 1);
    pm_graph *plain = regress_graph(fuzz_plain_scenario, sizeof fuzz_plain_scenario - 1);
    DIR *dir = opendir(REGRESS_DIR);
    assert_non_null(dir);
    unsigned count = 0;
    for (struct dirent *de; (de = readdir(dir)) != NULL;) {
        if (de->d_name[0] == '.')
            continue;
        if (strncmp(de->d_name, "known-", 6) == 0 && !getenv("PM_FUZZ_KNOWN")) {
            print_message("note: %s/%s not replayed: a reported bug not fixed yet "
                          "(PM_FUZZ_KNOWN=1 replays it)\n", REGRESS_DIR, de->d_name);
            continue;
        }
        regress_input in;
        regress_load(&in, de->d_name);
        if (in.len <= FUZZ_MAX_INPUT) {
            regress_scenario(&in);
            regress_map(&in, classes);
            regress_map(&in, plain);
        }
        free(in.data);
        count++;
    }
    closedir(dir);
    pm_graph_destroy(classes);
    pm_graph_destroy(plain);
    assert_true(count > 0); /* the folder is never empty: hand-* inputs */
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_regress_all),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
