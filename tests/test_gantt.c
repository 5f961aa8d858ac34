/*
 * test_gantt.c - Gantt chart writers: the text chart stays within its
 * width and shows every lane and box; the SVG is well-formed XML (checked
 * by Python's xml.etree.ElementTree, an outside parser, when
 * /usr/bin/python3 exists) with one rectangle per box and one line per
 * arrow; output is repeatable; bad charts are refused.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "pacemap/error.h"
#include "pacemap/gantt.h"

static const char *const lanes[3] = {"core 0", "core 1", "a very long lane name"};
static const pm_gantt_box boxes[5] = {
    {0, 0, 40, "src", 0},   {0, 40, 100, "mixer", 0}, {1, 50, 120, "fir<&>", 0},
    {2, 120, 120, "zero", 1}, {1, 130, 400, "decimator_with_a_long_name", 1}};
static const pm_gantt_arrow arrows[2] = {{0, 1, 40, 50, "mixer->fir"}, {1, 2, 120, 125, NULL}};

static pm_gantt chart(uint64_t clock)
{
    return (pm_gantt){"demo \"chart\"", 3, lanes, boxes, 5, arrows, 2, clock,
                      "Caution: a model result; validate on the target hardware before use "
                      "in products with hard real-time duties that can harm people."};
}

static char *text_of(const pm_gantt *c, int width, int *rc)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    *rc = pm_gantt_write_text(c, f, width);
    fclose(f);
    return buf;
}

static void test_text_width(void **state)
{
    (void)state;
    for (uint64_t clock = 0; clock <= 600000000; clock += 600000000) {
        pm_gantt c = chart(clock);
        for (int w = 30; w <= 100; w += 7) {
            int rc;
            char *t = text_of(&c, w, &rc);
            assert_int_equal(rc, PM_OK);
            for (char *line = t; *line;) {
                char *nl = strchr(line, '\n');
                assert_non_null(nl);
                assert_true(nl - line <= w);
                line = nl + 1;
            }
            assert_non_null(strstr(t, "core 1"));
            assert_non_null(strstr(t, "cycles"));
            if (w >= 79)
                assert_non_null(strstr(t, "mixer"));
            if (w == 30) /* src and mixer open in the same column */
                assert_non_null(strstr(t, "# marks"));
            if (clock)
                assert_non_null(strstr(t, " us"));
            free(t);
        }
    }
}

static char *svg_of(const pm_gantt *c, int *rc)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    *rc = pm_gantt_write_svg(c, f);
    fclose(f);
    return buf;
}

static int count(const char *s, const char *what)
{
    int n = 0;
    for (const char *p = s; (p = strstr(p, what)) != NULL; p++)
        n++;
    return n;
}

static void test_svg(void **state)
{
    (void)state;
    pm_gantt c = chart(600000000);
    int rc;
    char *a = svg_of(&c, &rc), *b = svg_of(&c, &rc);
    assert_int_equal(rc, PM_OK);
    assert_string_equal(a, b); /* byte-for-byte repeatable */
    /* lane backgrounds + boxes + the legend's six iteration swatches */
    assert_int_equal(count(a, "<rect x="), 3 + 5 + 6);
    assert_non_null(strstr(a, "fill by iteration"));
    assert_int_equal(count(a, "class=\"xfer\""), 2);
    assert_non_null(strstr(a, "fir&lt;&amp;&gt;"));
    assert_non_null(strstr(a, ">us</text>")); /* the second axis, with a clock */
    assert_null(strstr(a, "fir<&>"));
    if (system("test -x /usr/bin/python3") == 0) {
        char path[] = "/tmp/pm_gantt_XXXXXX";
        int fd = mkstemp(path);
        FILE *f = fdopen(fd, "w");
        fputs(a, f);
        fclose(f);
        char cmd[256];
        snprintf(cmd, sizeof cmd,
                 "/usr/bin/python3 -c 'import sys,xml.etree.ElementTree as E; "
                 "E.parse(sys.argv[1])' %s", path);
        assert_int_equal(system(cmd), 0); /* Python xml.etree: well-formed */
        remove(path);
    }
    free(a);
    free(b);
}

static void test_refused(void **state)
{
    (void)state;
    pm_gantt c = chart(0);
    int rc;
    free(text_of(&c, 101, &rc));
    assert_int_equal(rc, PM_EINVAL);
    pm_gantt_box bad[1] = {{7, 0, 1, "x", 0}};
    c.boxes = bad;
    c.nboxes = 1;
    free(svg_of(&c, &rc));
    assert_int_equal(rc, PM_EINVAL);
    pm_gantt_box back[1] = {{0, 5, 1, "x", 0}};
    c.boxes = back;
    free(text_of(&c, 80, &rc));
    assert_int_equal(rc, PM_EINVAL);
    pm_gantt empty = {NULL, 0, NULL, NULL, 0, NULL, 0, 0, NULL};
    char *t = text_of(&empty, 80, &rc);
    assert_int_equal(rc, PM_OK);
    free(t);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_text_width),
        cmocka_unit_test(test_svg),
        cmocka_unit_test(test_refused),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
