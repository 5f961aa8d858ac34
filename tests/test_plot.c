/*
 * test_plot.c - the SVG line-plot writer: well-formed output (parsed back
 * minimally: every tag closed in order), one polyline per run of finite
 * values with the expected number of points, markers, legend labels
 * escaped, byte-identical output for the same plot, refusals.
 */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "pacemap/error.h"
#include "pacemap/plot.h"

/* ---- helpers ------------------------------------------------------------ */

static char *render(const pm_plot *p, int *rc)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    assert_non_null(f);
    *rc = pm_plot_write_svg(p, f);
    assert_int_equal(fclose(f), 0);
    return buf;
}

/* Tags must nest: a stack of names; <?...?> and self-closing tags skip. */
static void assert_balanced(const char *s)
{
    char stack[64][32];
    int depth = 0, elements = 0;
    for (const char *c = strchr(s, '<'); c; c = strchr(c + 1, '<')) {
        const char *end = strchr(c, '>');
        assert_non_null(end);
        if (c[1] == '?')
            continue;
        bool closing = c[1] == '/', self = end[-1] == '/';
        const char *nm = c + 1 + closing;
        size_t n = strcspn(nm, " />");
        assert_true(n > 0 && n < 32);
        if (closing) {
            assert_true(depth > 0);
            depth--;
            assert_int_equal(strlen(stack[depth]), n);
            assert_memory_equal(stack[depth], nm, n);
        } else if (!self) {
            assert_true(depth < 64);
            memcpy(stack[depth], nm, n);
            stack[depth++][n] = '\0';
        }
        elements += !closing;
    }
    assert_int_equal(depth, 0);
    assert_true(elements > 10);
}

static size_t count(const char *s, const char *what)
{
    size_t n = 0;
    for (const char *c = strstr(s, what); c; c = strstr(c + 1, what))
        n++;
    return n;
}

/* Point counts of each <polyline>, in document order. */
static size_t polylines(const char *s, size_t *points, size_t max)
{
    size_t n = 0;
    for (const char *c = strstr(s, "<polyline points=\""); c && n < max;
         c = strstr(c + 1, "<polyline points=\"")) {
        const char *q = c + strlen("<polyline points=\""), *e = strchr(q, '"');
        size_t pts = 1;
        for (const char *k = q; k < e; k++)
            pts += *k == ' ';
        points[n++] = pts;
    }
    return n;
}

/* ---- a sample plot: two panels ------------------------------------------ */

static const double xs[5] = {1, 2, 3, 4, 5};
static const double period[5] = {120, 60, 40, 30, 30};
static const double floor_loop[5] = {25, 25, 25, 25, 25};
static const double gap[5] = {10, 12, NAN, 14, 15}; /* two runs: 2 + 2 points */
static const double thr[5] = {1.0 / 120, 1.0 / 60, 1.0 / 40, 1.0 / 30, 1.0 / 30};

static const pm_plot_series top[3] = {
    {"achieved period", period, true, 0},
    {"iteration bound <loop> & co", floor_loop, false, 0},
    {"gappy", gap, true, 0},
};
static const pm_plot_series bottom[1] = {{"throughput", thr, true, 3}}; /* triangles */
static const pm_plot_panel panels[2] = {
    {"cycles per iteration", top, 3},
    {"iterations per cycle", bottom, 1},
};
static const pm_plot sample = {"Speedup of \"demo\"", "a subtitle", "cores (P)", xs, 5, true,
                               panels, 2, "Caution: model results only. "
                               "Validate on the target hardware before relying on them."};

static void test_well_formed(void **state)
{
    (void)state;
    int rc;
    char *svg = render(&sample, &rc);
    assert_int_equal(rc, PM_OK);
    assert_true(strncmp(svg, "<?xml", 5) == 0);
    assert_non_null(strstr(svg, "<svg xmlns=\"http://www.w3.org/2000/svg\""));
    assert_true(strcmp(svg + strlen(svg) - 7, "</svg>\n") == 0);
    assert_balanced(svg);
    /* series are drawn last to first (the first on top): gappy 2 + 2,
     * loop 5, period 5; then the throughput panel 5 */
    size_t pts[16];
    assert_int_equal(polylines(svg, pts, 16), 5);
    assert_int_equal(pts[0], 2);
    assert_int_equal(pts[1], 2);
    assert_int_equal(pts[2], 5);
    assert_int_equal(pts[3], 5);
    assert_int_equal(pts[4], 5);
    /* markers: period 5 circles + legend 1; gappy 4 triangles + legend 1;
     * throughput in style 3 (triangles): 5 + legend 1 */
    assert_int_equal(count(svg, "<circle"), 6);
    assert_int_equal(count(svg, "<path d="), 11);
    /* labels escaped, axis labels present */
    assert_non_null(strstr(svg, "iteration bound &lt;loop&gt; &amp; co"));
    assert_non_null(strstr(svg, "Speedup of &quot;demo&quot;"));
    assert_int_equal(count(svg, ">cores (P)</text>"), 2);
    assert_non_null(strstr(svg, ">cycles per iteration</text>"));
    assert_non_null(strstr(svg, ">Caution: model results only."));
    /* y axis of the top panel from 0 to 120 in steps of 20 */
    assert_non_null(strstr(svg, ">120</text>"));
    assert_null(strstr(svg, ">140</text>"));
    free(svg);
}

static void test_deterministic(void **state)
{
    (void)state;
    int rc1, rc2;
    char *a = render(&sample, &rc1), *b = render(&sample, &rc2);
    assert_int_equal(rc1, PM_OK);
    assert_int_equal(rc2, PM_OK);
    assert_string_equal(a, b);
    free(a);
    free(b);
}

static void test_single_point_and_zero(void **state)
{
    (void)state;
    static const double x1[1] = {3}, zero[1] = {0};
    static const pm_plot_series se[1] = {{"zero", zero, true, 0}};
    static const pm_plot_panel pa[1] = {{"cycles", se, 1}};
    pm_plot p = {NULL, NULL, "cores", x1, 1, true, pa, 1, NULL};
    int rc;
    char *svg = render(&p, &rc);
    assert_int_equal(rc, PM_OK);
    assert_balanced(svg);
    size_t pts[4];
    assert_int_equal(polylines(svg, pts, 4), 1);
    assert_int_equal(pts[0], 1);
    assert_null(strstr(svg, "nan"));
    assert_null(strstr(svg, "inf"));
    free(svg);
}

static void test_refusals(void **state)
{
    (void)state;
    int rc;
    pm_plot p = sample;
    p.npoints = 0;
    free(render(&p, &rc));
    assert_int_equal(rc, PM_EINVAL);
    p = sample;
    p.npanels = 0;
    free(render(&p, &rc));
    assert_int_equal(rc, PM_EINVAL);
    static const double down[5] = {5, 4, 3, 2, 1};
    p = sample;
    p.x = down;
    free(render(&p, &rc));
    assert_int_equal(rc, PM_EINVAL);
    assert_int_equal(pm_plot_write_svg(NULL, stdout), PM_EINVAL);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_well_formed),
        cmocka_unit_test(test_deterministic),
        cmocka_unit_test(test_single_point_and_zero),
        cmocka_unit_test(test_refusals),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
