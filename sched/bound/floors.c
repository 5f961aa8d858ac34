/*
 * floors.c - the lower bounds on the period for P cores and the real-time
 * budget check.
 *
 * Three floors hold on every mapping of a single-rate graph: the work on
 * the cores (total / P; for core classes the fractional-assignment bound
 * of floors_work.c), the largest node at its fastest allowed class (a node
 * runs whole on one core per iteration unless the graph is unfolded:
 * Parhi & Messerschmitt, IEEE Trans. Computers 1991) and the iteration
 * bound (Ito & Parhi 1995).  Their maximum is the lower bound.  The map
 * floor adds the floors of floors_map.c (packing, pins, bus), which hold
 * for every map of whole nodes on these P cores.  What it does not do:
 * compute the bound (bound.c) or say whether a schedule reaches a floor.
 */
#include "bound_internal.h"

#include <string.h>

const char *pm_bound_floor_name(pm_floor_kind k)
{
    switch (k) {
    case PM_FLOOR_LOOP: return "loop";
    case PM_FLOOR_CORES: return "cores";
    case PM_FLOOR_NODE: return "node";
    case PM_FLOOR_PACKING: return "packing";
    case PM_FLOOR_PINNED: return "pinned";
    case PM_FLOOR_BUS: return "bus";
    case PM_FLOOR_SEARCH: return "search";
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

/* The work floor: total / procs, or the fractional bound on the classes
 * when procs is the platform's core count. */
static int floors_work(const pm_graph *g, const pm_bound *b, uint32_t procs, pm_floors *f)
{
    if (g->platform.nclasses > 1 && procs == g->platform.ncores)
        return pm_bound_work_floor(g, g->platform.class_count, &f->cores);
    return pm_rat_make(b->total_cycles, procs, &f->cores);
}

/* Raise the map floor to v when v is larger (ties keep the earlier kind). */
static void floors_raise(pm_floors *f, int64_t v, pm_floor_kind k)
{
    if (pm_rat_cmp(pm_rat_int(v), f->map_floor) > 0) {
        f->map_floor = pm_rat_int(v);
        f->map_binding = k;
    }
}

/* map_floor = max(lower bound, packing, pinned core, forced bus time). */
static int floors_map(const pm_graph *g, uint32_t procs, pm_floors *f)
{
    bool classes = g->platform.nclasses > 1 && procs == g->platform.ncores;
    int64_t pack, pin, bus;
    int rc = bound_packing(g, classes ? g->platform.class_count : NULL, procs, &pack);
    if (rc == PM_OK)
        rc = bound_pinned(g, &pin, &f->pinned_core);
    if (rc == PM_OK)
        rc = bound_bus(g, &bus);
    if (rc)
        return rc;
    f->packing = pm_rat_int(pack);
    f->pinned = pm_rat_int(pin);
    f->bus = pm_rat_int(bus);
    f->map_floor = f->lower_bound;
    f->map_binding = f->binding;
    floors_raise(f, pack, PM_FLOOR_PACKING);
    floors_raise(f, pin, PM_FLOOR_PINNED);
    floors_raise(f, bus, PM_FLOOR_BUS);
    return PM_OK;
}

int pm_bound_floors(const pm_graph *g, const pm_bound *b, uint32_t procs, pm_floors *out)
{
    if (!out)
        return PM_EINVAL;
    memset(out, 0, sizeof *out);
    out->pinned_core = PM_NONE;
    if (!g || !b || procs == 0)
        return PM_EINVAL;
    out->procs = procs;
    int rc = floors_work(g, b, procs, out);
    if (rc)
        return rc;
    out->node = pm_rat_int(b->largest_node == PM_NONE ? 0 : b->largest_cycles);
    out->has_loop = b->has_loop;
    if (b->has_loop)
        out->loop = b->iteration_bound;
    floors_pick(out);
    out->loop_fits = true;
    out->lower_fits = true;
    rc = floors_map(g, procs, out);
    return rc ? rc : floors_budget(g, out);
}

int pm_bound_gap(pm_rat period, pm_rat floor, bool *optimal, pm_rat *pct)
{
    if (!optimal || !pct)
        return PM_EINVAL;
    *optimal = pm_rat_cmp(period, floor) == 0;
    *pct = pm_rat_int(0);
    if (floor.num == 0)
        return PM_OK;
    pm_rat d;
    int rc = pm_rat_sub(period, floor, &d);
    if (rc == PM_OK)
        rc = pm_rat_div(d, floor, &d);
    return rc ? rc : pm_rat_mul(d, pm_rat_int(100), pct);
}
