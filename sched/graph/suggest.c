/*
 * suggest.c - "did you mean" for unknown names: the declared node or class
 * name nearest to a misspelt one.
 *
 * Distance is the optimal string alignment distance (Levenshtein with
 * adjacent transpositions; Damerau, CACM 1964), so `acg` is one step from
 * `agc`.  A name is offered only when it is close for its length (at most
 * one step per three characters), so short names get no guesses.  Only the
 * error path calls this: the cost, O(names x length^2), does not matter.
 */
#include "pacemap/graph.h"

#include <string.h>

#define SUGGEST_MAX_LEN 64 /* longer names get no suggestion */

static uint32_t suggest_min3(uint32_t a, uint32_t b, uint32_t c)
{
    uint32_t m = a < b ? a : b;
    return m < c ? m : c;
}

/* Optimal string alignment distance of a[0..n) and b[0..m), both at most
 * SUGGEST_MAX_LEN long; rows of the dynamic program kept three at a time. */
static uint32_t suggest_distance(const char *a, size_t n, const char *b, size_t m)
{
    uint32_t rows[3][SUGGEST_MAX_LEN + 1];
    uint32_t *prev2 = rows[0], *prev = rows[1], *cur = rows[2];
    for (size_t j = 0; j <= m; j++)
        prev[j] = (uint32_t)j;
    for (size_t i = 1; i <= n; i++) {
        cur[0] = (uint32_t)i;
        for (size_t j = 1; j <= m; j++) {
            uint32_t cost = a[i - 1] != b[j - 1];
            cur[j] = suggest_min3(prev[j] + 1, cur[j - 1] + 1, prev[j - 1] + cost);
            if (i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] &&
                prev2[j - 2] + 1 < cur[j])
                cur[j] = prev2[j - 2] + 1;
        }
        uint32_t *t = prev2;
        prev2 = prev;
        prev = cur;
        cur = t;
    }
    return prev[m];
}

/* Index of the nearest of `count` names (name_of(i)), or PM_NONE. */
static uint32_t suggest_best(const char *name, size_t len, uint32_t count,
                             const char *(*name_of)(const pm_graph *, uint32_t),
                             const pm_graph *g)
{
    if (len == 0 || len > SUGGEST_MAX_LEN)
        return PM_NONE;
    uint32_t best = PM_NONE, best_d = (uint32_t)(len / 3) + 1; /* must beat this */
    for (uint32_t i = 0; i < count; i++) {
        const char *cand = name_of(g, i);
        size_t m = strlen(cand);
        if (m > SUGGEST_MAX_LEN || (m > len ? m - len : len - m) >= best_d)
            continue;
        uint32_t d = suggest_distance(name, len, cand, m);
        if (d < best_d) {
            best = i;
            best_d = d;
        }
    }
    return best;
}

static const char *suggest_class_name(const pm_graph *g, uint32_t k)
{
    return g->platform.class_names[k];
}

uint32_t pm_graph_suggest_node(const pm_graph *g, const char *name, size_t len)
{
    return suggest_best(name, len, g->nnodes, pm_graph_node_name, g);
}

uint32_t pm_graph_suggest_class(const pm_graph *g, const char *name, size_t len)
{
    if (!g->platform.classes_named)
        return PM_NONE;
    return suggest_best(name, len, g->platform.nclasses, suggest_class_name, g);
}
