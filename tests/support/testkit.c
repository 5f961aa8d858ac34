/*
 * testkit.c - shared test pieces (see testkit.h).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
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

/* The status word glpsol prints in its report, e.g. "Status:     OPTIMAL". */
static bool tk_glpsol_optimal(const char *line)
{
    if (strncmp(line, "Status:", 7) != 0)
        return false;
    line += 7;
    while (*line == ' ')
        line++;
    size_t n = strcspn(line, "\r\n");
    return (n == 7 && strncmp(line, "OPTIMAL", 7) == 0) ||
           (n == 15 && strncmp(line, "INTEGER OPTIMAL", 15) == 0);
}

bool tk_glpsol(void (*write)(FILE *f, const void *ctx), const void *ctx, unsigned tmlim,
               double *opt)
{
    char lp[] = "/tmp/pm_glpk_XXXXXX", cmd[256], limit[32] = "", line[256];
    int fd = mkstemp(lp);
    if (fd < 0)
        return false;
    FILE *f = fdopen(fd, "w");
    if (!f) {
        close(fd);
        remove(lp);
        return false;
    }
    write(f, ctx);
    fclose(f);
    if (tmlim)
        snprintf(limit, sizeof limit, "--tmlim %u ", tmlim);
    snprintf(cmd, sizeof cmd, "glpsol %s--lp %s -o /dev/stdout 2>/dev/null", limit, lp);
    FILE *p = popen(cmd, "r");
    bool optimal = false, have = false;
    while (p && fgets(line, sizeof line, p)) {
        optimal = optimal || tk_glpsol_optimal(line);
        have = have || sscanf(line, "Objective: obj = %lf", opt) == 1;
    }
    if (p)
        pclose(p);
    remove(lp);
    return optimal && have;
}

static bool tk_crosses(const pm_edge *e)
{
    return e->src != e->dst;
}

static void tk_write_occupancy_rows(FILE *f, const pm_graph *g)
{
    uint32_t n = g->nnodes, P = g->platform.ncores;
    const pm_comm *cm = &g->platform.comm;
    for (uint32_t v = 0; v < n; v++) {
        fprintf(f, " one%u:", v);
        for (uint32_t c = 0; c < P; c++)
            fprintf(f, " + x%u_%u", v, c);
        fprintf(f, " = 1\n");
    }
    for (uint32_t e = 0; e < g->nedges; e++)
        for (uint32_t c = 0; c < P && tk_crosses(&g->edges[e]); c++) {
            uint32_t u = g->edges[e].src, v = g->edges[e].dst;
            fprintf(f, " so%u_%u: s%u_%u - x%u_%u + x%u_%u >= 0\n", e, c, e, c, u, c, v, c);
            fprintf(f, " ri%u_%u: r%u_%u - x%u_%u + x%u_%u >= 0\n", e, c, e, c, v, c, u, c);
        }
    long long work = 0;
    for (uint32_t c = 0; c < P; c++) {
        fprintf(f, " core%u: T", c);
        for (uint32_t v = 0; v < n; v++)
            fprintf(f, " - %lld x%u_%u", (long long)g->nodes[v].cycles, v, c);
        for (uint32_t e = 0; e < g->nedges; e++)
            if (tk_crosses(&g->edges[e]))
                fprintf(f, " - %lld s%u_%u - %lld r%u_%u", (long long)cm->send, e, c,
                        (long long)cm->recv, e, c);
        fprintf(f, " >= 0\n");
    }
    for (uint32_t v = 0; v < n; v++)
        work += g->nodes[v].cycles;
    fprintf(f, " work: %u T >= %lld\n", P, work);
    for (uint32_t v = 0; v < n; v++)
        for (uint32_t c = v + 1; c < P; c++)
            fprintf(f, " sym%u_%u: x%u_%u = 0\n", v, c, v, c);
}

void tk_write_occupancy_lp(FILE *f, const void *ctx)
{
    const pm_graph *g = ctx;
    uint32_t n = g->nnodes, P = g->platform.ncores;
    fprintf(f, "Minimize\n obj: T\nSubject To\n");
    tk_write_occupancy_rows(f, g);
    fprintf(f, "Bounds\n");
    for (uint32_t e = 0; e < g->nedges; e++)
        for (uint32_t c = 0; c < P && tk_crosses(&g->edges[e]); c++)
            fprintf(f, " 0 <= s%u_%u <= 1\n 0 <= r%u_%u <= 1\n", e, c, e, c);
    fprintf(f, "Binary\n");
    for (uint32_t v = 0; v < n; v++)
        for (uint32_t c = 0; c < P; c++)
            fprintf(f, " x%u_%u\n", v, c);
    fprintf(f, "End\n");
}

pm_graph *tk_random_nodes(uint64_t *state, uint32_t n, uint32_t procs, uint32_t cycles_below)
{
    pm_graph *g = pm_graph_create("random");
    assert_non_null(g);
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &procs), PM_OK);
    for (uint32_t v = 0; v < n; v++) {
        char name[16];
        snprintf(name, sizeof name, "n%u", v);
        uint32_t cycles = tk_rand(state, cycles_below);
        assert_int_equal(pm_graph_add_node(g, name, strlen(name), cycles, NULL), PM_OK);
    }
    return g;
}

pm_graph *tk_random_sim_graph(uint64_t *state, uint32_t n, uint32_t procs)
{
    pm_graph *g = tk_random_nodes(state, n, procs, 15);
    /* drawn one by one: initialiser order is unspecified in C */
    uint32_t latency = tk_rand(state, 8), per_word = tk_rand(state, 3);
    uint32_t send = tk_rand(state, 3), recv = tk_rand(state, 3);
    g->platform.comm = (pm_comm){ latency, per_word, send, recv };
    uint32_t ne = tk_rand(state, 2 * n + 1);
    for (uint32_t i = 0; i < ne; i++) {
        uint32_t u = tk_rand(state, n), v = tk_rand(state, n);
        pm_edge e = pm_graph_edge_default(u, v);
        e.words = 1 + tk_rand(state, 4);
        e.delay = u < v ? (tk_rand(state, 3) == 0 ? 1 + tk_rand(state, 2) : 0)
                        : 1 + tk_rand(state, 3);
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

void tk_raise_lags(const pm_graph *g, pm_map *m)
{
    for (bool again = true; again;) {
        again = false;
        for (uint32_t e = 0; e < g->nedges; e++) {
            const pm_edge *ed = &g->edges[e];
            if (ed->delay + m->lag[ed->dst] < m->lag[ed->src]) {
                m->lag[ed->dst] = m->lag[ed->src] - (uint32_t)ed->delay;
                again = true;
            }
        }
    }
}
