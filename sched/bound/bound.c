/*
 * bound.c - the iteration bound of a single-rate graph: checks, strongly
 * connected parts, Howard's policy iteration per part (bound_howard.c), the
 * certificate, the parts worst first and the critical loops
 * (bound_loops.c).  Also the stand-alone certificate check used by tests.
 *
 * What it does not do: expand multirate graphs (sdf.c does), compute the
 * floors for P cores (floors.c), or print anything.
 */
#include "bound_internal.h"
#include "../graph/scc_internal.h"
#include "pacemap/order.h"

#include <stdlib.h>
#include <string.h>

static int bound_multirate_error(const pm_graph *g, pm_diag *diag)
{
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        if (ed->produce != 1 || ed->consume != 1) {
            pm_diag_set(diag, g->file, ed->line, ed->col,
                        "multirate edge %s -> %s (produce=%lld consume=%lld): the bound "
                        "needs the single-rate expansion of the graph",
                        pm_graph_node_name(g, ed->src), pm_graph_node_name(g, ed->dst),
                        (long long)ed->produce, (long long)ed->consume);
            return PM_EUNSUPPORTED;
        }
    }
    return PM_OK;
}

static int bound_sum_delays(const pm_graph *g, int64_t *out, pm_diag *diag)
{
    uint64_t sum = 0;
    for (uint32_t e = 0; e < g->nedges; e++) {
        if (g->edges[e].delay < 0)
            return PM_EINVAL;
        sum += (uint64_t)g->edges[e].delay;
        if (sum > (uint64_t)PM_MAX_VALUE) {
            pm_diag_set(diag, g->file, g->edges[e].line, g->edges[e].col,
                        "the delays of the graph add up to more than 2^62-1");
            return PM_ERANGE;
        }
    }
    if (out)
        *out = (int64_t)sum;
    return PM_OK;
}

int bound_node_times(const pm_graph *g, int64_t **t_out, int64_t *total, int64_t *sum_delays,
                     uint32_t *largest, pm_diag *diag)
{
    if (t_out)
        *t_out = NULL;
    int rc = bound_multirate_error(g, diag);
    if (rc == PM_OK)
        rc = bound_sum_delays(g, sum_delays, diag);
    if (rc)
        return rc;
    int64_t *t = t_out ? malloc(((size_t)g->nnodes + 1) * sizeof *t) : NULL;
    if (t_out && !t)
        return PM_ENOMEM;
    uint64_t sum = 0;
    uint32_t big = PM_NONE;
    int64_t bigt = -1;
    for (uint32_t v = 0; v < g->nnodes && rc == PM_OK; v++) {
        const pm_node *n = &g->nodes[v];
        int64_t tv = pm_graph_min_cycles(g, v);
        if (t)
            t[v] = tv;
        if (tv < 0) {
            pm_diag_set(diag, g->file, n->line, n->col,
                        "node '%s' can run on no core class", pm_graph_node_name(g, v));
            rc = PM_EPLATFORM;
        } else if ((sum += (uint64_t)tv) > (uint64_t)PM_MAX_VALUE) {
            pm_diag_set(diag, g->file, n->line, n->col,
                        "the node cycles of the graph add up to more than 2^62-1");
            rc = PM_ERANGE;
        } else if (tv > bigt) {
            big = v;
            bigt = tv;
        }
    }
    if (rc) {
        free(t);
        return rc;
    }
    if (total)
        *total = (int64_t)sum;
    if (largest)
        *largest = big;
    if (t_out)
        *t_out = t;
    return PM_OK;
}

/* ---- parts and the answer ----------------------------------------------- */

typedef struct part_key {
    int64_t p, q;
    uint32_t first, k;
} part_key;

static int part_key_cmp(const void *a, const void *b)
{
    const part_key *x = a, *y = b;
    pm_i128 l = (pm_i128)x->p * y->q, r = (pm_i128)y->p * x->q;
    if (l != r)
        return l > r ? -1 : 1; /* worst (largest) first */
    return (x->first > y->first) - (x->first < y->first);
}

/* The `want` worst parts, sorted, into keys[]: insertion into a short
 * sorted list when few are wanted (the memory of a full sort of a million
 * parts is saved), a full sort otherwise. */
static void bound_top_parts(const howard *h, const uint32_t *first, uint32_t want,
                            part_key *keys)
{
    uint32_t have = 0;
    for (uint32_t k = 0; k < h->ncycles; k++) {
        part_key key = { h->cycles[k].p, h->cycles[k].q, first[k], k };
        if (want >= h->ncycles) {
            keys[have++] = key;
            continue;
        }
        if (have == want && part_key_cmp(&key, &keys[want - 1]) >= 0)
            continue;
        uint32_t at = have < want ? have++ : want - 1;
        while (at > 0 && part_key_cmp(&key, &keys[at - 1]) < 0) {
            keys[at] = keys[at - 1];
            at--;
        }
        keys[at] = key;
    }
    if (want >= h->ncycles)
        qsort(keys, have, sizeof *keys, part_key_cmp);
}

/* The parts, worst first, with one worst loop each (policy cycle). */
static int bound_fill_parts(const howard *h, const uint32_t *first, const uint32_t *size,
                            uint32_t max, pm_bound *out)
{
    uint32_t np = h->ncycles;
    out->nparts_total = np;
    out->nparts = max && max < np ? max : np;
    part_key *keys = malloc(((size_t)out->nparts + 1) * sizeof *keys);
    if (!keys)
        return PM_ENOMEM;
    bound_top_parts(h, first, out->nparts, keys);
    size_t total = 0;
    for (uint32_t i = 0; i < out->nparts; i++)
        total += 2 * (size_t)howard_policy_len(h, h->cycles[keys[i].k].root);
    out->parts = calloc((size_t)out->nparts + 1, sizeof *out->parts);
    out->loop_pool_ = malloc((total + 1) * sizeof *out->loop_pool_);
    if (!out->parts || !out->loop_pool_) {
        free(keys);
        return PM_ENOMEM;
    }
    for (uint32_t i = 0, at = 0; i < out->nparts; i++) {
        pm_part *pt = &out->parts[i];
        const howard_cycle *c = &h->cycles[keys[i].k];
        pt->nnodes = size[keys[i].k];
        pt->first_node = keys[i].first;
        pt->bound = (pm_rat){ c->p, c->q };
        howard_policy_loop(h, c->root, out->loop_pool_ + at, &pt->worst);
        bound_loop_sums(h->g, &pt->worst);
        at += 2 * pt->worst.len;
    }
    free(keys);
    return PM_OK;
}

/* Howard on every part with a loop; first[]/size[] per part. */
static int bound_solve_parts(howard *h, const pm_scc *s, uint32_t **first, uint32_t **size)
{
    uint32_t np = 0;
    for (uint32_t c = 0; c < s->ncomp; c++) {
        uint32_t a = s->start[c], b = s->start[c + 1];
        np += b - a > 1 || h->off[b] > h->off[a];
    }
    *first = malloc(((size_t)np + 1) * sizeof **first);
    *size = malloc(((size_t)np + 1) * sizeof **size);
    if (!*first || !*size)
        return PM_ENOMEM;
    for (uint32_t c = 0; c < s->ncomp; c++) {
        uint32_t a = s->start[c], b = s->start[c + 1];
        if (b - a == 1 && h->off[b] == h->off[a])
            continue; /* one node without a self-loop */
        int rc = howard_solve_part(h, a, b);
        if (rc)
            return rc;
        (*first)[h->ncycles - 1] = s->order[a];
        (*size)[h->ncycles - 1] = b - a;
    }
    return PM_OK;
}

/* Kahn's sort of the zero-delay edges on the gathered lists (dst and
 * saturated delays per out-edge position, read in order); false when some
 * node stays unsorted, i.e. a loop without delay exists. */
static bool bound_zero_free(const pm_graph *g, const uint32_t *dst, const uint8_t *d8)
{
    uint32_t *order = malloc(((size_t)g->nnodes + 1) * sizeof *order), count = 0;
    bool sorted = order && pm_order_csr(g->nnodes, g->out_off, dst, d8, PM_ORDER_FIFO,
                                        order, &count) == PM_OK && count == g->nnodes;
    free(order);
    return sorted; /* on failure the slow check says which */
}

/* Gather, per out-edge position, the target and the delay saturated at
 * 255 (one random pass over the edges instead of three); *exact tells
 * whether every delay fit.  Then rule out loops without delay. */
static int bound_gather(const pm_graph *g, uint32_t *dst, uint8_t *d8, bool *exact,
                        pm_diag *diag)
{
    *exact = true;
    for (uint32_t k = 0; k < g->nedges; k++) {
        if (k + 8 < g->nedges)
            __builtin_prefetch(&g->edges[g->out_edge[k + 8]]);
        const pm_edge *e = &g->edges[g->out_edge[k]];
        dst[k] = e->dst;
        d8[k] = (uint8_t)(e->delay > 255 ? 255 : e->delay);
        *exact = *exact && e->delay <= 255;
    }
    if (bound_zero_free(g, dst, d8))
        return PM_OK;
    return pm_order_check_zero_delay(g, diag); /* names the loop */
}

/* Parts of g and the local arrays of the iteration.  The targets and
 * delays of the out-edges are first gathered in lists, so that the checks,
 * the depth-first search and the copy read them in order instead of a
 * whole pm_edge each. */
static int bound_prepare(const pm_graph *g, int64_t sum_t, int64_t sum_d, pm_scc *s,
                         howard *h, pm_diag *diag)
{
    uint32_t *dst = malloc(((size_t)g->nedges + 1) * sizeof *dst);
    uint8_t *d8 = malloc((size_t)g->nedges + 1);
    bool exact;
    int rc = dst && d8 ? bound_gather(g, dst, d8, &exact, diag) : PM_ENOMEM;
    scc_csr c = { .n = g->nnodes, .off = g->out_off, .list = dst };
    if (rc == PM_OK)
        rc = scc_run(&c, s);
    if (rc == PM_OK)
        rc = howard_init(h, g, s, dst, exact ? d8 : NULL, sum_t, sum_d);
    free(dst);
    free(d8);
    free(s->comp); /* the local numbering replaces it */
    s->comp = NULL;
    if (rc == PM_OK)
        rc = howard_alloc_state(h);
    return rc;
}

static int bound_solve(const pm_graph *g, int64_t sum_t, int64_t sum_d,
                       const pm_bound_opts *opts, pm_bound *out, pm_diag *diag)
{
    pm_scc s = { 0 };
    howard h = { 0 };
    uint32_t *first = NULL, *size = NULL;
    int rc = bound_prepare(g, sum_t, sum_d, &s, &h, diag);
    if (rc == PM_OK)
        rc = bound_solve_parts(&h, &s, &first, &size);
    if (rc == PM_OK)
        rc = howard_certify(&h);
    free(s.start); /* the part ranges are done with */
    s.start = NULL;
    if (rc == PM_OK)
        rc = howard_map(&h);
    if (rc == PM_OK)
        rc = bound_fill_parts(&h, first, size, opts ? opts->max_parts : 0, out);
    free(first);
    free(size);
    if (rc == PM_OK && out->nparts_total > 0) {
        out->has_loop = true;
        out->iteration_bound = out->parts[0].bound;
        uint32_t max = opts && opts->max_critical ? opts->max_critical
                                                  : PM_BOUND_DEFAULT_MAX_CRITICAL;
        rc = bound_critical_loops(&h, out->iteration_bound.num, out->iteration_bound.den,
                                  max, out);
    }
    howard_free(&h);
    pm_scc_free(&s);
    return rc;
}

int pm_bound_compute(const pm_graph *g, const pm_bound_opts *opts, pm_bound *out,
                     pm_diag *diag)
{
    if (!out)
        return PM_EINVAL;
    memset(out, 0, sizeof *out);
    out->largest_node = PM_NONE;
    if (!g || !g->finalized)
        return PM_EINVAL;
    int64_t sum_d;
    int rc = bound_node_times(g, NULL, &out->total_cycles, &sum_d, &out->largest_node, diag);
    if (rc)
        return rc;
    if (out->largest_node != PM_NONE)
        out->largest_cycles = pm_graph_min_cycles(g, out->largest_node);
    rc = bound_solve(g, out->total_cycles, sum_d, opts, out, diag);
    if (rc == PM_EINVAL)
        pm_diag_set(diag, g->file, 0, 0, "internal error: the bound's certificate failed");
    if (rc)
        pm_bound_free(out);
    return rc;
}

void pm_bound_free(pm_bound *b)
{
    if (!b)
        return;
    for (uint32_t i = 0; i < b->ncritical; i++)
        free(b->critical[i].nodes);
    free(b->critical);
    free(b->parts);
    free(b->loop_pool_);
    memset(b, 0, sizeof *b);
    b->largest_node = PM_NONE;
}

/* ---- stand-alone certificate (Bellman-Ford), for tests ------------------ */

/* Keeps V * (den * t + num * d) inside 128 bits. */
#define CERTIFY_MAX (INT64_C(1) << 40)

/* One relaxation pass for longest paths; true when some value rose. */
static bool certify_pass(const pm_graph *g, const int64_t *t, pm_rat l, pm_i128 *dist)
{
    bool changed = false;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        pm_i128 w = (pm_i128)l.den * t[ed->src] - (pm_i128)l.num * ed->delay;
        if (dist[ed->src] + w > dist[ed->dst]) {
            dist[ed->dst] = dist[ed->src] + w;
            changed = true;
        }
    }
    return changed;
}

int pm_bound_certify(const pm_graph *g, pm_rat lambda, bool *ok)
{
    if (!g || !ok || !g->finalized || lambda.den <= 0)
        return PM_EINVAL;
    *ok = false;
    if (lambda.den > CERTIFY_MAX || lambda.num > CERTIFY_MAX)
        return PM_ERANGE;
    int64_t *t;
    int rc = bound_node_times(g, &t, NULL, NULL, NULL, NULL);
    if (rc)
        return rc;
    if (lambda.num < 0) /* every loop exceeds a negative ratio: use 0 - 1/2 */
        lambda = (pm_rat){ -1, 2 };
    pm_i128 *dist = calloc((size_t)g->nnodes + 1, sizeof *dist);
    if (!dist) {
        free(t);
        return PM_ENOMEM;
    }
    /* without a positive cycle, longest paths settle within V passes */
    bool changed = true;
    for (uint32_t pass = 0; pass <= g->nnodes && changed; pass++)
        changed = certify_pass(g, t, lambda, dist);
    *ok = !changed;
    free(dist);
    free(t);
    return PM_OK;
}
