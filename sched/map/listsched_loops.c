/*
 * listsched_loops.c - the list scheduler's loop rule: which loops, or
 * whole strongly connected parts, stay on one core, and the period floor
 * that guards the placement (why: the comment below).
 *
 * It marks groups (ls_ctx.cluster), checks that one core may run each
 * group (pins, classes), and sets the floor the placement keeps each
 * core's work within (ls_ctx.cap).  Not here: the placement that obeys
 * the groups and the floor (listsched_place.c).
 */
#include "sched_internal.h"

#include "pacemap/bound.h"

#include <stdlib.h>

/* ---- the loop rule ------------------------------------------------------ *
 *
 * Why: in self-timed execution every cycle of the inter-processor
 * communication graph bounds the period by its time over its delays, and a
 * cross-core edge on a loop adds its transfer (send + wire + recv) to that
 * loop's time (Sriram & Bhattacharyya, "Embedded Multiprocessors", 2000).
 * On the other hand a core's work per iteration bounds the period too, so
 * gathering a group on one core costs nothing as long as the group's work
 * stays within the floor the period has anyway:
 *   T = max(ceil(total work / P), largest node, ceil(iteration bound))
 * (smallest cycles of each node; opts.target_period replaces T).  A loop
 * with d delays lets its nodes overlap at most d iterations, so a loop of
 * one delay already forces a period >= its work: splitting it gains nothing
 * and pays transfers on every lap - and its work is <= the iteration bound
 * <= T, so the rule keeps it.  Per strongly connected part with a loop:
 *   1. its work W <= T: the whole part stays on one core;
 *   2. else its worst loop (the one setting the part's bound, Ito & Parhi
 *      1995, from pm_bound_compute) has work <= T: that loop's nodes stay
 *      on one core, the part's other nodes go where they finish first;
 *   3. else the part is scheduled loop-blind: no single core can carry its
 *      worst loop within T, transfers are the price of spreading it.
 * Pins and classes that rule a group's single core out also leave it free. */

static int64_t ls_target(const ls_ctx *x, const pm_sched_opts *o, const pm_bound *b)
{
    if (o && o->target_period > 0)
        return o->target_period;
    int64_t total = 0, largest = 0;
    bool ovf = false;
    for (uint32_t v = 0; v < x->g->nnodes; v++) {
        int64_t t = pm_graph_min_cycles(x->g, v);
        total = sched_add(total, t, &ovf);
        largest = ls_max(largest, t);
    }
    int64_t t = ls_max((total + x->P - 1) / x->P, largest);
    return b && b->has_loop ? ls_max(t, pm_rat_ceil(b->iteration_bound)) : t;
}

/* Fix a group's core from pins and its classes from every member; false
 * when the members' constraints cannot be met on one core. */
static bool ls_part_fits(ls_ctx *x, uint32_t k, const uint32_t *members, uint32_t len)
{
    const pm_platform *p = &x->g->platform;
    bool *ok = &x->cl_class_ok[(size_t)k * p->nclasses], any = false;
    x->cl_core[k] = PM_NONE;
    for (uint32_t c = 0; c < p->nclasses; c++)
        ok[c] = p->class_count[c] > 0;
    for (uint32_t i = 0; i < len; i++) {
        const pm_node *n = &x->g->nodes[members[i]];
        if (n->pin_core != PM_NONE) {
            if (x->cl_core[k] != PM_NONE && x->cl_core[k] != n->pin_core)
                return false;
            x->cl_core[k] = n->pin_core;
        }
        for (uint32_t c = 0; c < p->nclasses; c++)
            ok[c] = ok[c] && pm_graph_cycles_on(x->g, members[i], c) >= 0 &&
                    (n->pin_class == PM_NONE || n->pin_class == c);
    }
    for (uint32_t c = 0; c < p->nclasses; c++)
        any = any || ok[c];
    if (x->cl_core[k] != PM_NONE && !ok[p->core_class[x->cl_core[k]]])
        return false;
    return any;
}

/* Make members[0..len) group k when their work fits T and one core may
 * run them all; true when done. */
static bool ls_keep(ls_ctx *x, uint32_t k, const uint32_t *members, uint32_t len, int64_t T)
{
    int64_t work = 0;
    bool ovf = false;
    for (uint32_t i = 0; i < len; i++)
        work = sched_add(work, pm_graph_min_cycles(x->g, members[i]), &ovf);
    if (len < 2 || work > T || !ls_part_fits(x, k, members, len)) {
        x->cl_core[k] = PM_NONE;
        return false;
    }
    for (uint32_t i = 0; i < len; i++)
        x->cluster[members[i]] = k;
    x->cl_left[k] = work;
    return true;
}

/* Steps 1-3 above for every part, given the nodes grouped by part. */
static void ls_apply_rule(ls_ctx *x, const uint32_t *comp, const uint32_t *start,
                          const uint32_t *members, const bool *cyclic, uint32_t ncomp,
                          const pm_bound *b, int64_t T)
{
    for (uint32_t k = 0; k < ncomp; k++)
        x->cl_core[k] = PM_NONE;
    for (uint32_t k = 0; k < ncomp; k++)
        if (cyclic[k])
            ls_keep(x, k, members + start[k], start[k + 1] - start[k], T);
    for (uint32_t j = 0; b && j < b->nparts; j++) {
        const pm_part *pt = &b->parts[j];
        uint32_t k = comp[pt->first_node];
        if (x->cluster[pt->first_node] == PM_NONE && pt->worst.len < start[k + 1] - start[k])
            ls_keep(x, k, pt->worst.nodes, pt->worst.len, T);
    }
}

/* Nodes grouped by part (counting sort, ids ascending): part k holds
 * members[start[k] .. start[k+1]). */
static void ls_group(const pm_graph *g, const uint32_t *comp, uint32_t ncomp, uint32_t *start,
                     uint32_t *members)
{
    for (uint32_t v = 0; v < g->nnodes; v++)
        start[comp[v] + 1]++;
    for (uint32_t k = 0; k < ncomp; k++)
        start[k + 1] += start[k];
    for (uint32_t v = 0; v < g->nnodes; v++)
        members[start[comp[v]]++] = v;
    for (uint32_t k = ncomp; k > 0; k--)
        start[k] = start[k - 1];
    start[0] = 0;
}

/* The bound of g for the rule; false (no loop information) when it cannot
 * be had, e.g. sums past 62 bits: the rule then works from the work alone. */
static bool ls_bound(const pm_graph *g, pm_bound *b)
{
    pm_diag d;
    pm_diag_clear(&d);
    if (pm_bound_compute(g, NULL, b, &d) == PM_OK)
        return true;
    pm_bound_free(b);
    return false;
}

/* Mark the groups that the loop rule keeps on one core. */
int ls_loop_parts(ls_ctx *x, const pm_sched_opts *o)
{
    const pm_graph *g = x->g;
    uint32_t ncomp = 0, *comp = malloc(((size_t)g->nnodes + 1) * sizeof *comp);
    uint32_t *start = NULL, *members = NULL;
    bool *cyclic = NULL;
    int rc = comp ? sched_scc(g, comp, &ncomp, &cyclic) : PM_ENOMEM;
    if (rc == PM_OK) {
        start = calloc((size_t)ncomp + 2, sizeof *start);
        members = malloc(((size_t)g->nnodes + 1) * sizeof *members);
        x->cl_core = malloc(((size_t)ncomp + 1) * sizeof *x->cl_core);
        x->cl_class_ok = calloc(((size_t)ncomp + 1) * g->platform.nclasses, 1);
        x->cl_left = calloc((size_t)ncomp + 1, sizeof *x->cl_left);
        x->load = calloc((size_t)x->P + 1, sizeof *x->load);
        x->pend = calloc((size_t)x->P + 1, sizeof *x->pend);
        x->via = calloc((size_t)g->nnodes + 1, sizeof *x->via);
        x->first = malloc(((size_t)x->P + 1) * sizeof *x->first);
        rc = start && members && x->cl_core && x->cl_class_ok && x->cl_left && x->load &&
                     x->pend && x->via && x->first
                 ? PM_OK
                 : PM_ENOMEM;
    }
    if (rc == PM_OK) {
        pm_bound b = {0};
        bool have = ls_bound(g, &b);
        ls_group(g, comp, ncomp, start, members);
        for (uint32_t c = 0; c < x->P; c++)
            x->first[c] = PM_MAX_VALUE;
        x->cap = ls_target(x, o, have ? &b : NULL);
        ls_apply_rule(x, comp, start, members, cyclic, ncomp, have ? &b : NULL, x->cap);
        if (have)
            pm_bound_free(&b);
    }
    free(comp);
    free(start);
    free(members);
    free(cyclic);
    return rc;
}
