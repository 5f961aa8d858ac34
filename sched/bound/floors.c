/*
 * floors.c - the lower bounds on the period for P cores and the real-time
 * budget check.
 *
 * Three floors hold on every mapping of a single-rate graph: the total work
 * spread evenly (total / P), the largest node (a node runs whole on one core
 * per iteration unless the graph is unfolded: Parhi & Messerschmitt, IEEE
 * Trans. Computers 1991) and the iteration bound (Ito & Parhi 1995).  Their
 * maximum is the lower bound.  What it does not do: compute the bound
 * (bound.c) or say whether a schedule reaches the floor.
 */
#include "pacemap/bound.h"

#include <string.h>

const char *pm_bound_floor_name(pm_floor_kind k)
{
    switch (k) {
    case PM_FLOOR_LOOP: return "loop";
    case PM_FLOOR_CORES: return "cores";
    case PM_FLOOR_NODE: return "node";
    }
    return "?";
}

/* The binding floor: the largest; ties go to loop, then node, then cores. */
static void floors_pick(pm_floors *f)
{
    f->lower_bound = f->cores;
    f->binding = PM_FLOOR_CORES;
    if (pm_rat_cmp(f->node, f->lower_bound) >= 0) {
        f->lower_bound = f->node;
        f->binding = PM_FLOOR_NODE;
    }
    if (f->has_loop && pm_rat_cmp(f->loop, f->lower_bound) >= 0) {
        f->lower_bound = f->loop;
        f->binding = PM_FLOOR_LOOP;
    }
}

/* budget = clock / rate cycles per iteration, and the margins. */
static int floors_budget(const pm_graph *g, pm_floors *f)
{
    uint64_t clock = g->platform.clock_hz, rate = g->platform.rate_hz;
    if (!clock || !rate)
        return PM_OK;
    if (clock > INT64_MAX || rate > INT64_MAX)
        return PM_ERANGE;
    int rc = pm_rat_make((int64_t)clock, (int64_t)rate, &f->budget);
    if (rc == PM_OK)
        rc = pm_rat_sub(f->budget, f->lower_bound, &f->margin);
    if (rc)
        return rc;
    f->has_budget = true;
    f->loop_fits = !f->has_loop || pm_rat_cmp(f->loop, f->budget) <= 0;
    f->lower_fits = pm_rat_cmp(f->lower_bound, f->budget) <= 0;
    f->margin_us = pm_rat_to_double(f->margin) / (double)clock * 1e6;
    return PM_OK;
}

int pm_bound_floors(const pm_graph *g, const pm_bound *b, uint32_t procs, pm_floors *out)
{
    if (!out)
        return PM_EINVAL;
    memset(out, 0, sizeof *out);
    if (!g || !b || procs == 0)
        return PM_EINVAL;
    out->procs = procs;
    int rc = pm_rat_make(b->total_cycles, procs, &out->cores);
    if (rc)
        return rc;
    out->node = pm_rat_int(b->largest_node == PM_NONE ? 0 : b->largest_cycles);
    out->has_loop = b->has_loop;
    if (b->has_loop)
        out->loop = b->iteration_bound;
    floors_pick(out);
    out->loop_fits = true;
    out->lower_fits = true;
    return floors_budget(g, out);
}
