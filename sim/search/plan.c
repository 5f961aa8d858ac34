/*
 * plan.c - from a scenario to the map every command uses: expansion of a
 * multirate scenario, the list schedule, the rule that keeps a node's
 * firings on one core, the optional refinement, the timing of the map, and
 * map files that name the scenario's own nodes.
 *
 * What it does not do: print, read scenario files (the reader does), or
 * choose the core count (pm_plan_set_procs takes it from the caller).
 */
#include "pacemap/plan.h"

#include "pacemap/ipc.h"
#include "pacemap/mapper.h"
#include "pacemap/refine.h"
#include "pacemap/sdf.h"
#include "pacemap/sim.h"

#include <stdlib.h>
#include <string.h>

void pm_plan_free(pm_plan *p)
{
    if (!p)
        return;
    if (p->graph != p->source)
        pm_graph_destroy(p->graph);
    pm_graph_destroy(p->source);
    free(p->rep);
    free(p->origin);
    memset(p, 0, sizeof *p);
}

int pm_plan_init(pm_plan *p, pm_graph *source, pm_diag *diag)
{
    if (!p) {
        pm_graph_destroy(source);
        return PM_EINVAL;
    }
    memset(p, 0, sizeof *p);
    if (!source)
        return PM_EINVAL;
    p->source = source;
    /* a single-rate scenario is its own expansion: no repetition vector to
     * solve (it would cost seconds on a graph of millions of edges) */
    if (pm_graph_is_single_rate(source)) {
        p->graph = source;
        return PM_OK;
    }
    int rc = pm_sdf_repetition(source, &p->rep, diag);
    if (rc == PM_OK)
        rc = pm_sdf_check_iteration(source, p->rep, diag);
    if (rc == PM_OK)
        rc = pm_sdf_expand(source, p->rep, &p->graph, &p->origin, diag);
    if (rc != PM_OK) {
        pm_plan_free(p);
        return rc;
    }
    p->multirate = true;
    return PM_OK;
}

int pm_plan_set_procs(pm_plan *p, uint32_t procs, pm_diag *diag)
{
    if (!p || !p->source)
        return PM_EINVAL;
    int rc = pm_graph_set_procs_override(p->source, procs, diag);
    if (rc == PM_OK && p->graph != p->source)
        rc = pm_graph_set_procs_override(p->graph, procs, diag);
    return rc;
}

/* ---- the multirate rule ------------------------------------------------- */

typedef struct plan_place {
    uint32_t node, core;
    int64_t first_start; /* earliest start of any of its firings */
} plan_place;

static int plan_place_cmp(const void *a, const void *b)
{
    const plan_place *x = a, *y = b;
    if (x->core != y->core)
        return x->core < y->core ? -1 : 1;
    if (x->first_start != y->first_start)
        return x->first_start < y->first_start ? -1 : 1;
    return (x->node > y->node) - (x->node < y->node);
}

/* Where each scenario node goes: the core that ran most of its firings'
 * cycles in the schedule of the expansion (ties: the lower core), so the
 * heavy part of a node stays where the scheduler balanced it.  work is
 * ncores zeroes and is left zeroed. */
static void plan_place_nodes(const pm_plan *p, const pm_schedule *sc, int64_t *work,
                             plan_place *place)
{
    uint32_t ncores = sc->ncores, x = 0;
    for (uint32_t v = 0; v < p->source->nnodes; v++) {
        uint32_t first = x;
        place[v] = (plan_place){ v, 0, INT64_MAX };
        for (; x < p->graph->nnodes && p->origin[x] == v; x++) {
            const pm_slot *sl = &sc->slots[x];
            work[sl->core] += sl->end - sl->start + 1; /* +1: zero-cycle firings count */
            if (sl->start < place[v].first_start)
                place[v].first_start = sl->start;
        }
        for (uint32_t c = 1; c < ncores; c++)
            if (work[c] > work[place[v].core])
                place[v].core = c;
        for (uint32_t i = first; i < x; i++)
            work[sc->slots[i].core] = 0;
    }
}

/* The map of the scenario's nodes that schedule sc of the expansion
 * implies; the nodes of a core run in the order of their earliest firing. */
static int plan_nodes_from_firings(const pm_plan *p, const pm_schedule *sc, pm_map **out)
{
    uint32_t n = p->source->nnodes, ncores = sc->ncores;
    plan_place *place = malloc(((size_t)n + 1) * sizeof *place);
    int64_t *work = calloc((size_t)ncores + 1, sizeof *work);
    uint32_t *order = malloc(((size_t)n + 1) * sizeof *order);
    uint32_t *counts = calloc((size_t)ncores + 1, sizeof *counts);
    const uint32_t **lists = calloc((size_t)ncores + 1, sizeof *lists);
    int rc = place && work && order && counts && lists ? PM_OK : PM_ENOMEM;
    if (rc == PM_OK) {
        plan_place_nodes(p, sc, work, place);
        qsort(place, n, sizeof *place, plan_place_cmp);
        for (uint32_t i = 0; i < n; i++) {
            order[i] = place[i].node;
            if (counts[place[i].core]++ == 0)
                lists[place[i].core] = &order[i];
        }
        rc = pm_map_create(ncores, n, lists, counts, out);
    }
    free(place);
    free(work);
    free(order);
    free(counts);
    free(lists);
    return rc;
}

/* Replace map *m of the expansion, timed by sc, by one that keeps every
 * firing of a node on one core. */
static int plan_firings_together(const pm_plan *p, const pm_schedule *sc, pm_map **m,
                                 pm_diag *diag)
{
    pm_map *nodes = NULL, *firings = NULL;
    int rc = plan_nodes_from_firings(p, sc, &nodes);
    if (rc == PM_OK)
        rc = pm_map_expand(p->source, p->rep, nodes, &firings, diag);
    pm_map_destroy(nodes);
    if (rc == PM_OK) {
        pm_map_destroy(*m);
        *m = firings;
    }
    return rc;
}

/* ---- the map ------------------------------------------------------------ */

/* Replace map *m (timed by *sc) by one with a lower simulated period when
 * the local search finds one, and time it again. */
static int plan_refine(const pm_plan *p, pm_schedule **sc, pm_map **m, pm_diag *diag)
{
    pm_refine_opts ro = { 0 };
    if (p->multirate) {
        ro.source = p->source;
        ro.rep = p->rep;
        ro.origin = p->origin;
    }
    pm_map *better = NULL;
    int improved = 0;
    int rc = pm_refine_map(p->graph, *m, *sc, &ro, &better, &improved, diag);
    if (rc == PM_OK && improved) {
        pm_map_destroy(*m);
        *m = better;
        pm_sched_destroy(*sc);
        *sc = NULL;
        return pm_sched_from_map(p->graph, *m, sc, diag);
    }
    pm_map_destroy(better);
    return rc;
}

/* The list schedule, made to keep a multirate node's firings together.
 * *sc is left NULL when nobody needs the timing (a plain list map). */
static int plan_list(const pm_plan *p, const pm_plan_opts *o, bool timed, pm_schedule **sc,
                     pm_map **m, pm_diag *diag)
{
    bool need = timed || p->multirate || o->refine;
    int rc = pm_sched_list(p->graph, o->sched, need ? sc : NULL, m, diag);
    if (rc == PM_OK && p->multirate) {
        rc = plan_firings_together(p, *sc, m, diag);
        pm_sched_destroy(*sc);
        *sc = NULL;
        if (rc == PM_OK)
            rc = pm_sched_from_map(p->graph, *m, sc, diag);
    }
    return rc;
}

/* A multirate scenario: the period-first mapper over its nodes, starting
 * from the list scheduler's refined map of them (so never worse). */
static int plan_period_multirate(const pm_plan *p, const pm_mapper_opts *mo, pm_map **m,
                                 pm_diag *diag)
{
    static const pm_plan_opts list = { .mapper = PM_PLAN_MAPPER_LIST, .refine = true };
    pm_schedule *sc = NULL;
    pm_map *xm = NULL, *nodes = NULL;
    int rc = plan_list(p, &list, false, &sc, &xm, diag);
    if (rc == PM_OK)
        rc = plan_refine(p, &sc, &xm, diag);
    pm_sched_destroy(sc);
    if (rc == PM_OK)
        rc = pm_map_collapse(p->source, p->rep, xm, &nodes, diag);
    pm_map_destroy(xm);
    if (rc == PM_OK)
        rc = pm_mapper_map_multirate(p->source, p->rep, p->graph, p->origin, nodes, mo, m,
                                     NULL, diag);
    pm_map_destroy(nodes);
    return rc;
}

/* The period-first mapper's map, timed when the caller wants it and one
 * iteration's schedule means something (no lags). */
static int plan_period(const pm_plan *p, const pm_plan_opts *o, bool timed, pm_schedule **sc,
                       pm_map **m, pm_diag *diag)
{
    pm_mapper_opts mo = { .time_ms = o->mapper_ms };
    int rc = p->multirate ? plan_period_multirate(p, &mo, m, diag)
                          : pm_mapper_map(p->graph, &mo, m, NULL, diag);
    if (rc == PM_OK && timed && !pm_map_has_lags(*m))
        rc = pm_sched_from_map(p->graph, *m, sc, diag);
    return rc;
}

int pm_plan_map(const pm_plan *p, const pm_plan_opts *o, pm_schedule **sched,
                pm_map **map, pm_diag *diag)
{
    static const pm_plan_opts defaults = { 0 };
    if (sched)
        *sched = NULL;
    if (!map)
        return PM_EINVAL;
    *map = NULL;
    if (!p || !p->graph)
        return PM_EINVAL;
    const pm_plan_opts *po = o ? o : &defaults;
    pm_schedule *sc = NULL;
    pm_map *m = NULL;
    bool period = po->mapper != PM_PLAN_MAPPER_LIST;
    int rc = period ? plan_period(p, po, sched != NULL, &sc, &m, diag)
                    : plan_list(p, po, sched != NULL, &sc, &m, diag);
    if (rc == PM_OK && po->refine && !period)
        rc = plan_refine(p, &sc, &m, diag);
    if (rc != PM_OK) {
        pm_sched_destroy(sc);
        pm_map_destroy(m);
        return rc;
    }
    if (sched)
        *sched = sc;
    else
        pm_sched_destroy(sc);
    *map = m;
    return PM_OK;
}

/* ---- the period of a map ------------------------------------------------ */

/* A bus: the simulator's period (the IPC ratio is only a floor there). */
static int plan_simulated(const pm_plan *p, const pm_map *m, pm_plan_timing *out,
                          pm_diag *diag)
{
    pm_sim_opts so = { .iterations = PM_PLAN_TIMING_ITERATIONS };
    pm_sim_result r;
    int rc = pm_sim_run(p->graph, m, &so, &r, diag);
    if (rc == PM_OK) {
        out->period = r.period;
        out->exact = r.steady;
        out->simulated = true;
        pm_sim_result_free(&r);
    }
    return rc;
}

int pm_plan_period(const pm_plan *p, const pm_map *m, pm_plan_timing *out, pm_diag *diag)
{
    if (!out)
        return PM_EINVAL;
    memset(out, 0, sizeof *out);
    if (!p || !p->graph || !m)
        return PM_EINVAL;
    if (p->graph->platform.interconnect == PM_BUS)
        return plan_simulated(p, m, out, diag);
    pm_ipc ipc;
    int rc = pm_ipc_compute(p->graph, m, &ipc, diag);
    if (rc == PM_OK) {
        out->period = ipc.period;
        out->exact = true;
        pm_ipc_free(&ipc);
    }
    return rc;
}

/* ---- map files ---------------------------------------------------------- */

/* Point diag at the `core N:` line of the map file that lists `name`
 * (the message stays); left as it is when the file does not list it. */
static void plan_point_at(const char *path, uint32_t core, const char *name, pm_diag *diag)
{
    uint32_t line, col;
    if (diag && pm_map_file_locate(path, core, name, &line, &col) == PM_OK) {
        char msg[sizeof diag->msg];
        memcpy(msg, diag->msg, sizeof msg);
        pm_diag_set(diag, path, line, col, "%s", msg);
    }
}

/* The loop's entry to point at: a node listed right before the next node
 * of the loop on its core (the order is what the user can change); len
 * when the loop is made of data edges alone. */
static uint32_t plan_loop_culprit(const pm_map *m, const uint32_t *loop, uint32_t len)
{
    for (uint32_t i = 0; i < len; i++) {
        uint32_t v = loop[i], w = loop[(i + 1) % len], c = m->core_of[v];
        for (uint32_t k = m->off[c]; k + 1 < m->off[c + 1]; k++)
            if (m->order[k] == v && m->order[k + 1] == w)
                return i;
    }
    return len;
}

/* A single-rate map that stalls: the loop of waits, at the map file's line. */
static int plan_check_deadlock(const pm_graph *g, const pm_map *m, const char *path,
                               pm_diag *diag)
{
    uint32_t *loop = malloc((g->nnodes + 1) * sizeof *loop), len = 0;
    if (!loop)
        return PM_ENOMEM;
    int rc = pm_map_deadlock_loop(g, m, loop, &len);
    if (rc == PM_EDEADLOCK) {
        char text[400];
        size_t at = 0;
        for (uint32_t i = 0; i <= len && at < sizeof text - 80; i++)
            at += (size_t)snprintf(text + at, sizeof text - at, "%s%s", i ? " -> " : "",
                                   pm_graph_node_name(g, loop[i % len]));
        uint32_t i = plan_loop_culprit(m, loop, len);
        uint32_t v = loop[i % len], w = loop[(i + 1) % len];
        char why[160] = "";
        if (i < len)
            snprintf(why, sizeof why, " (core %u lists '%s' before '%s')", m->core_of[v],
                     pm_graph_node_name(g, v), pm_graph_node_name(g, w));
        pm_diag_set(diag, path, 0, 0, "the map deadlocks: in one round each node must end "
                    "before the next starts: %s%s%s", text,
                    at >= sizeof text - 80 ? " ..." : "", why);
        plan_point_at(path, m->core_of[v], pm_graph_node_name(g, v), diag);
    }
    free(loop);
    return rc;
}

/* The multirate expansion names the core and node it stalls at. */
static void plan_point_expand(const char *path, pm_diag *diag)
{
    const char *at = diag ? strstr(diag->msg, "core ") : NULL;
    unsigned core;
    char name[256];
    if (at && sscanf(at, "core %u waits at '%255[^']'", &core, name) == 2)
        plan_point_at(path, core, name, diag);
}

int pm_plan_map_read(const pm_plan *p, const char *path, pm_map **out, pm_diag *diag)
{
    if (!out)
        return PM_EINVAL;
    *out = NULL;
    if (!p || !p->source || !path)
        return PM_EINVAL;
    pm_map *m = NULL;
    int rc = pm_map_read_file(path, p->source, &m, diag);
    if (rc == PM_OK && !p->multirate)
        rc = plan_check_deadlock(p->source, m, path, diag);
    if (rc == PM_OK && p->multirate) {
        pm_map *xm = NULL;
        rc = pm_map_expand(p->source, p->rep, m, &xm, diag);
        if (rc == PM_EDEADLOCK)
            plan_point_expand(path, diag);
        pm_map_destroy(m);
        m = xm;
    }
    if (rc == PM_OK)
        *out = m;
    return rc;
}

int pm_plan_map_write(const pm_plan *p, const pm_map *m, FILE *out)
{
    if (!p || !p->graph || !m || !out)
        return PM_EINVAL;
    if (!p->multirate)
        return pm_map_write(m, p->graph, out);
    pm_map *nodes = NULL;
    int rc = pm_map_collapse(p->source, p->rep, m, &nodes, NULL);
    if (rc == PM_OK)
        rc = pm_map_write(nodes, p->source, out);
    pm_map_destroy(nodes);
    return rc;
}
