/*
 * testkit.c - shared test pieces (see testkit.h).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "testkit.h"

pm_map *tk_random_map(uint64_t *state, uint32_t n, uint32_t procs, uint32_t shuffle_one_in)
{
    uint32_t lists[8][64], counts[8] = { 0 };
    const uint32_t *ptr[8];
    assert_true(n <= 64 && procs >= 1 && procs <= 8);
    for (uint32_t v = 0; v < n; v++) {
        uint32_t c = tk_rand(state, procs);
        lists[c][counts[c]++] = v;
    }
    for (uint32_t c = 0; c < procs; c++) {
        ptr[c] = lists[c];
        if (tk_rand(state, shuffle_one_in) == 0)
            for (uint32_t i = counts[c]; i > 1; i--) {
                uint32_t j = tk_rand(state, i), tmp = lists[c][i - 1];
                lists[c][i - 1] = lists[c][j];
                lists[c][j] = tmp;
            }
    }
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(procs, n, ptr, counts, &m), PM_OK);
    return m;
}

const char *tk_helper_dir(void)
{
    const char *h = getenv("PM_HELPERS");
    return h && *h ? h : "build/tests/helpers";
}

bool tk_read_ratio(FILE *f, long *w, long *d)
{
    char tok[32];
    assert_int_equal(fscanf(f, "%31s", tok), 1);
    if (strcmp(tok, "none") == 0)
        return false;
    *w = atol(tok);
    assert_int_equal(fscanf(f, "%ld", d), 1);
    return true;
}

char *tk_slurp(const char *dir, const char *name)
{
    char path[512];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    FILE *f = fopen(path, "r");
    if (!f)
        return NULL;
    size_t cap = 4096, len = 0, got;
    char *buf = malloc(cap);
    while (buf && (got = fread(buf + len, 1, cap - len - 1, f)) > 0) {
        len += got;
        if (len + 1 == cap) {
            char *nb = realloc(buf, cap * 2);
            if (!nb)
                free(buf);
            buf = nb;
            cap *= 2;
        }
    }
    if (buf)
        buf[len] = '\0';
    fclose(f);
    return buf;
}
