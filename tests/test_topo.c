/*
 * test_topo.c - choice of processing units on synthetic hwloc topologies.
 * The outside reference is hwloc itself: the test loads the same synthetic
 * description directly (hwloc_topology_set_synthetic) and asks hwloc for
 * each chosen PU's core, L3 cache and package
 * (hwloc_get_ancestor_obj_by_type), independently of the code under test.
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <hwloc.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "pacemap/topo.h"

typedef struct where {
    int core, l3, pkg;
} where;

/* Where hwloc puts PU os in the synthetic topology `desc`. */
static where locate(const char *desc, uint32_t os)
{
    hwloc_topology_t h;
    assert_int_equal(hwloc_topology_init(&h), 0);
    assert_int_equal(hwloc_topology_set_synthetic(h, desc), 0);
    assert_int_equal(hwloc_topology_load(h), 0);
    hwloc_obj_t pu = hwloc_get_pu_obj_by_os_index(h, os);
    assert_non_null(pu);
    hwloc_obj_t c = hwloc_get_ancestor_obj_by_type(h, HWLOC_OBJ_CORE, pu);
    hwloc_obj_t l = hwloc_get_ancestor_obj_by_type(h, HWLOC_OBJ_L3CACHE, pu);
    hwloc_obj_t p = hwloc_get_ancestor_obj_by_type(h, HWLOC_OBJ_PACKAGE, pu);
    where w = {c ? (int)c->logical_index : -1, l ? (int)l->logical_index : -1,
               p ? (int)p->logical_index : -1};
    hwloc_topology_destroy(h);
    return w;
}

static int distinct_cores(const char *desc, const pm_topo_choice *c)
{
    int n = 0;
    for (uint32_t i = 0; i < c->n; i++) {
        int seen = 0;
        for (uint32_t j = 0; j < i; j++)
            seen |= locate(desc, c->pu[j]).core == locate(desc, c->pu[i]).core;
        n += !seen;
    }
    return n;
}

static pm_topo *open_synth(const char *desc)
{
    pm_topo *t = NULL;
    assert_int_equal(pm_topo_create(desc, &t), PM_OK);
    return t;
}

static void test_counts(void **state)
{
    (void)state;
    pm_topo *t = open_synth("pack:2 l3:1 core:2 pu:2");
    assert_int_equal(pm_topo_npus(t), 8);
    assert_int_equal(pm_topo_ncores(t), 4);
    assert_int_equal(pm_topo_npackages(t), 2);
    pm_topo_destroy(t);
    pm_topo_destroy(NULL);
    assert_int_equal(pm_topo_create("bogus:x", &t), PM_EPLATFORM);
    assert_null(t);
}

/* Physical cores first, in one package while they fit; SMT siblings last. */
static void test_cores_before_siblings(void **state)
{
    (void)state;
    const char *desc = "pack:2 l3:1 core:2 pu:2";
    pm_topo *t = open_synth(desc);
    pm_topo_choice c;
    for (uint32_t n = 1; n <= 8; n++) {
        assert_int_equal(pm_topo_choose(t, n, NULL, 0, false, &c, NULL), PM_OK);
        int want = n <= 4 ? (int)n : 4;
        assert_int_equal(distinct_cores(desc, &c), want);
        if (n == 2) /* both cores of one package and its L3 */
            assert_int_equal(locate(desc, c.pu[0]).pkg, locate(desc, c.pu[1]).pkg);
        if (n == 5)
            assert_non_null(strstr(c.why[4], "SMT sibling"));
        for (uint32_t i = 0; i < n; i++)
            for (uint32_t j = 0; j < i; j++)
                assert_int_not_equal(c.pu[i], c.pu[j]);
        assert_false(c.shared);
        printf("# n=%u: %s\n", n, c.summary);
        pm_topo_choice_free(&c);
    }
    pm_topo_destroy(t);
}

/* Two L3 caches of two cores in one package: two threads share an L3. */
static void test_shared_cache_preferred(void **state)
{
    (void)state;
    const char *desc = "pack:1 l3:2 core:2 pu:1";
    pm_topo *t = open_synth(desc);
    pm_topo_choice c;
    assert_int_equal(pm_topo_choose(t, 2, NULL, 0, false, &c, NULL), PM_OK);
    assert_int_equal(locate(desc, c.pu[0]).l3, locate(desc, c.pu[1]).l3);
    assert_non_null(strstr(c.summary, "last-level cache"));
    assert_null(strstr(c.why[0], "L#")); /* plain words, no borrowed notation */
    assert_non_null(strstr(c.why[0], "on physical core 0 of package 0, last-level cache 0"));
    pm_topo_choice_free(&c);
    assert_int_equal(pm_topo_choose(t, 3, NULL, 0, false, &c, NULL), PM_OK);
    assert_int_equal(distinct_cores(desc, &c), 3);
    pm_topo_choice_free(&c);
    pm_topo_destroy(t);
}

static void test_too_few_pus(void **state)
{
    (void)state;
    pm_topo *t = open_synth("pack:1 core:2 pu:1");
    pm_topo_choice c;
    pm_diag d;
    pm_diag_clear(&d);
    assert_int_equal(pm_topo_choose(t, 3, NULL, 0, false, &c, &d), PM_EPLATFORM);
    assert_non_null(strstr(d.msg, "3 cores"));
    assert_non_null(strstr(d.msg, "only 2 processing units"));
    assert_null(c.pu);
    assert_int_equal(pm_topo_choose(t, 3, NULL, 0, true, &c, &d), PM_OK);
    assert_true(c.shared);
    assert_int_equal(c.pu[2], c.pu[0]);
    assert_non_null(strstr(c.why[2], "--oversubscribe"));
    assert_non_null(strstr(c.summary, "PUs shared"));
    pm_topo_choice_free(&c);
    pm_topo_destroy(t);
}

static void test_listed_pus(void **state)
{
    (void)state;
    pm_topo *t = open_synth("pack:1 core:2 pu:2");
    pm_topo_choice c;
    pm_diag d;
    const uint32_t list[] = {1, 0};
    assert_int_equal(pm_topo_choose(t, 2, list, 2, false, &c, &d), PM_OK);
    assert_int_equal(c.pu[0], 1);
    assert_int_equal(c.pu[1], 0);
    /* hwloc: PUs 0 and 1 are the two threads of core 0 */
    assert_int_equal(locate("pack:1 core:2 pu:2", 0).core,
                     locate("pack:1 core:2 pu:2", 1).core);
    assert_non_null(strstr(c.why[1], "SMT sibling"));
    pm_topo_choice_free(&c);
    const uint32_t bad[] = {9};
    assert_int_equal(pm_topo_choose(t, 1, bad, 1, false, &c, &d), PM_ENAME);
    assert_non_null(strstr(d.msg, "PU 9"));
    assert_int_equal(pm_topo_choose(t, 3, list, 2, false, &c, &d), PM_EPLATFORM);
    pm_topo_destroy(t);
}

static void test_parse_list(void **state)
{
    (void)state;
    uint32_t *v, n;
    pm_diag d;
    assert_int_equal(pm_topo_parse_list("0,2,4-6", &v, &n, &d), PM_OK);
    const uint32_t want[] = {0, 2, 4, 5, 6};
    assert_int_equal(n, 5);
    assert_memory_equal(v, want, sizeof want);
    free(v);
    const char *bad[] = {"", "a", "1,", "3-1", "1-", "1;2", "99999999999"};
    for (size_t i = 0; i < sizeof bad / sizeof *bad; i++) {
        assert_int_equal(pm_topo_parse_list(bad[i], &v, &n, &d), PM_ESYNTAX);
        assert_null(v);
    }
}

/* The real machine: a choice exists; binding may be refused (containers),
 * which the runner reports as a warning, so only print it. */
static void test_this_machine(void **state)
{
    (void)state;
    pm_topo *t = NULL;
    assert_int_equal(pm_topo_create(NULL, &t), PM_OK);
    assert_true(pm_topo_npus(t) >= 1);
    pm_topo_choice c;
    assert_int_equal(pm_topo_choose(t, 1, NULL, 0, false, &c, NULL), PM_OK);
    int rc = pm_topo_bind_thread(t, c.pu[0]);
    printf("# this machine: %s; binding: %s\n", c.summary, pm_error_name(rc));
    pm_topo_choice_free(&c);
    pm_topo_destroy(t);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_counts),
        cmocka_unit_test(test_cores_before_siblings),
        cmocka_unit_test(test_shared_cache_preferred),
        cmocka_unit_test(test_too_few_pus),
        cmocka_unit_test(test_listed_pus),
        cmocka_unit_test(test_parse_list),
        cmocka_unit_test(test_this_machine),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
