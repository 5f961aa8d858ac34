/*
 * mapdead.c - where a map deadlocks, said in terms of the map file: a loop
 * of data edges and core order that carries no token, and the `core N:`
 * line that lists one of its nodes (map.h).  Does not simulate; the engine
 * and the IPC graph find the same deadlocks by running or by ratio.
 *
 * Why a loop is the whole story: with lags, round r of a core runs node v's
 * iteration r - lag[v], so an edge u -> v with d delays lets v's round r
 * wait for u's round r - (d + lag[v] - lag[u]).  Consecutive nodes of a
 * core's order wait within a round (0), the last waits for the first one
 * round back (1).  Self-timed execution stalls exactly when some loop of
 * these waits sums to 0 rounds; as no wait is negative once the map fits
 * the graph, that loop uses only waits of 0.
 */
#include "pacemap/map.h"

#include <stdio.h>
#include <sys/types.h>
#include <stdlib.h>
#include <string.h>

typedef struct md_dfs {
    const pm_graph *g;
    const pm_map *m;
    uint32_t *pos;    /* node -> index in m->order */
    uint8_t *state;   /* 0 new, 1 on the path, 2 done */
    uint32_t *path, *next_i; /* the DFS path and, per path entry, its next wait to try */
} md_dfs;

/* The k-th zero-round wait out of v (k counts data edges, then the order
 * successor); PM_NONE when there are no more. */
static uint32_t md_wait(const md_dfs *s, uint32_t v, uint32_t k)
{
    const pm_graph *g = s->g;
    const uint32_t *lag = s->m->lag;
    uint32_t nout = g->out_off[v + 1] - g->out_off[v];
    for (; k < nout; k++) {
        const pm_edge *e = &g->edges[g->out_edge[g->out_off[v] + k]];
        if (e->delay + (int64_t)lag[e->dst] - (int64_t)lag[e->src] == 0)
            return k;
    }
    if (k == nout) {
        uint32_t c = s->m->core_of[v], i = s->pos[v];
        if (i + 1 < s->m->off[c + 1])
            return k;
    }
    return PM_NONE;
}

static uint32_t md_target(const md_dfs *s, uint32_t v, uint32_t k)
{
    const pm_graph *g = s->g;
    uint32_t nout = g->out_off[v + 1] - g->out_off[v];
    if (k < nout)
        return g->edges[g->out_edge[g->out_off[v] + k]].dst;
    return s->m->order[s->pos[v] + 1];
}

/* Depth-first from root; on a wait back into the path, copies the loop to
 * loop[0..*len) and returns true. */
static bool md_from(md_dfs *s, uint32_t root, uint32_t *loop, uint32_t *len)
{
    uint32_t depth = 0;
    s->path[depth] = root, s->next_i[depth++] = 0, s->state[root] = 1;
    while (depth > 0) {
        uint32_t v = s->path[depth - 1];
        uint32_t k = md_wait(s, v, s->next_i[depth - 1]);
        if (k == PM_NONE) {
            s->state[v] = 2, depth--;
            continue;
        }
        s->next_i[depth - 1] = k + 1;
        uint32_t w = md_target(s, v, k);
        if (s->state[w] == 1) {
            uint32_t at = depth;
            while (s->path[at - 1] != w)
                at--;
            *len = depth - (at - 1);
            memcpy(loop, s->path + at - 1, *len * sizeof *loop);
            return true;
        }
        if (s->state[w] == 0)
            s->path[depth] = w, s->next_i[depth++] = 0, s->state[w] = 1;
    }
    return false;
}

int pm_map_deadlock_loop(const pm_graph *g, const pm_map *m, uint32_t *loop, uint32_t *len)
{
    *len = 0;
    if (!g || !m || m->nnodes != g->nnodes || !g->finalized)
        return PM_EINVAL;
    uint32_t n = g->nnodes;
    md_dfs s = { g, m, malloc((n + 1) * sizeof *s.pos), calloc(n + 1, 1),
                 malloc((n + 1) * sizeof *s.path), malloc((n + 1) * sizeof *s.next_i) };
    int rc = s.pos && s.state && s.path && s.next_i ? PM_OK : PM_ENOMEM;
    for (uint32_t i = 0; rc == PM_OK && i < n; i++)
        s.pos[m->order[i]] = i;
    bool found = false;
    for (uint32_t v = 0; rc == PM_OK && v < n && !found; v++)
        if (s.state[v] == 0)
            found = md_from(&s, v, loop, len);
    free(s.pos), free(s.state), free(s.path), free(s.next_i);
    return rc != PM_OK ? rc : found ? PM_EDEADLOCK : PM_OK;
}

/* Does line s (ending at end) read "core C:" and list `name`?  Sets the
 * 1-based column of the name. */
static bool md_line_lists(const char *s, const char *end, uint32_t core, const char *name,
                          uint32_t *col)
{
    const char *p = s;
    while (p < end && (*p == ' ' || *p == '\t'))
        p++;
    unsigned long c;
    int used = 0;
    if (end - p < 5 || strncmp(p, "core", 4) != 0 ||
        sscanf(p + 4, " %lu%n", &c, &used) != 1 || c != core)
        return false;
    size_t nl = strlen(name);
    for (p += 4 + used; p < end && *p != '#'; p++) {
        bool starts = p == s || p[-1] == ' ' || p[-1] == '\t' || p[-1] == ':';
        bool ends = p + nl == end || strchr(" \t@#\r", p[nl]) != NULL;
        if (starts && (size_t)(end - p) >= nl && strncmp(p, name, nl) == 0 && ends) {
            *col = (uint32_t)(p - s) + 1;
            return true;
        }
    }
    return false;
}

int pm_map_file_locate(const char *path, uint32_t core, const char *name, uint32_t *line,
                       uint32_t *col)
{
    *line = 0, *col = 0;
    FILE *f = fopen(path, "rb");
    if (!f)
        return PM_EIO;
    char *buf = NULL;
    size_t cap = 0;
    ssize_t got;
    uint32_t at = 0;
    bool found = false;
    while (!found && (got = getline(&buf, &cap, f)) > 0) {
        size_t n = (size_t)got;
        at++;
        while (n > 0 && (buf[n - 1] == '\n' || buf[n - 1] == '\r'))
            n--;
        found = md_line_lists(buf, buf + n, core, name, col);
    }
    free(buf);
    fclose(f);
    if (found)
        *line = at;
    return found ? PM_OK : PM_ENAME;
}
