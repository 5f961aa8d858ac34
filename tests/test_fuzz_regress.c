/*
 * test_fuzz_regress.c - replays every input under tests/fuzz/regress/
 * through the scenario reader (and what the fuzzer runs after it), so a bug
 * the fuzzer once found stays fixed in every `make test` and `make asan`.
 *
 * Each input must give either success with a result or a clean error: a
 * negative PM_E* code, no result, a non-empty one-line message.  Crashes,
 * leaks and undefined behaviour are caught by `make asan`.  Inputs named
 * hand-* were written by hand for edges the fuzzer reaches slowly.
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

#include "pacemap/graph.h"
#include "pacemap/reader.h"

#define REGRESS_DIR "tests/fuzz/regress"
#define REGRESS_MAX (1u << 20)

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

/* The error contract of error.h and reader.h. */
static void regress_check_error(const regress_input *in, int rc, const void *result,
                                const pm_diag *d)
{
    if (rc < 0 && (d->msg[0] == '\0' || strchr(d->msg, '\n')))
        fail_msg("%s: bad message '%s'", in->path, d->msg);
    assert_true(rc < 0);
    assert_true(rc >= PM_EUNSUPPORTED);
    assert_null(result);
}

static void regress_scenario(const regress_input *in)
{
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_scenario_read_string(in->data, in->len, in->path, &g, &d);
    if (rc != PM_OK) {
        regress_check_error(in, rc, g, &d);
        return;
    }
    assert_non_null(g);
    assert_true(g->finalized);
    for (uint32_t e = 0; e < g->nedges; e++) {
        assert_true(g->edges[e].src < g->nnodes);
        assert_true(g->edges[e].dst < g->nnodes);
    }
    pm_graph_destroy(g);
}

static void test_regress_all(void **state)
{
    (void)state;
    DIR *dir = opendir(REGRESS_DIR);
    assert_non_null(dir);
    unsigned count = 0;
    for (struct dirent *de; (de = readdir(dir)) != NULL;) {
        if (de->d_name[0] == '.')
            continue;
        regress_input in;
        regress_load(&in, de->d_name);
        regress_scenario(&in);
        free(in.data);
        count++;
    }
    closedir(dir);
    assert_true(count > 0); /* the folder is never empty: hand-* inputs */
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_regress_all),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
