/*
 * sweep_whatif.c - what would move the limit at the saturation point.
 *
 * Floors are recomputed exactly, never extrapolated: a copy of the graph
 * with one class (each node at its smallest cycles, the times every floor
 * uses) and the same node and edge ids is changed one node or one edge at a
 * time and handed to pm_bound_compute.  A node made faster lowers its
 * loop's ratio by (cycles taken off) / delays, but the bound then follows
 * whichever loop is worst after the change, which only the recomputation
 * knows.  A mapping loop is re-simulated on the same map with the node's
 * time changed (pm_sim_opts.node_cycles), since the period of a map is a
 * maximum over the loops of its inter-processor communication graph.
 * What it does not do: search for better maps or transformations.
 */
#include "sweep_internal.h"

#include <stdlib.h>
#include <string.h>

#define WHATIF_MAX_EDGES 32

void sweep_whatif_free(pm_sweep_whatif *w)
{
    if (!w)
        return;
    free(w->rows);
    free(w->delay_next);
    free(w->next_nodes);
    memset(w, 0, sizeof *w);
}

/* One class, smallest cycles, same ids: what the floors see. */
static int whatif_copy(const pm_graph *g, pm_graph **out)
{
    pm_graph *c = pm_graph_create(g->file);
    int rc = c ? PM_OK : PM_ENOMEM;
    for (uint32_t v = 0; rc == PM_OK && v < g->nnodes; v++) {
        const char *name = pm_graph_node_name(g, v);
        rc = pm_graph_add_node(c, name, strlen(name), pm_graph_min_cycles(g, v), NULL);
    }
    for (uint32_t e = 0; rc == PM_OK && e < g->nedges; e++)
        rc = pm_graph_add_edge(c, &g->edges[e], NULL);
    if (rc == PM_OK)
        rc = pm_graph_finalize(c);
    if (rc != PM_OK)
        pm_graph_destroy(c), c = NULL;
    *out = c;
    return rc;
}

int sweep_floors_of(const pm_graph *c, uint32_t procs, pm_bound *b, pm_floors *f,
                    pm_diag *diag)
{
    int rc = pm_bound_compute(c, NULL, b, diag);
    return rc == PM_OK ? pm_bound_floors(c, b, procs, f) : rc;
}

static pm_rat whatif_ratio(int64_t cycles, int64_t delays)
{
    pm_rat r = pm_rat_int(0);
    if (delays > 0)
        pm_rat_make(cycles < 0 ? 0 : cycles, delays, &r);
    return r;
}

static int64_t whatif_less(int64_t cycles, int64_t d)
{
    return cycles > d ? cycles - d : 0;
}

static int whatif_rows(pm_sweep_whatif *w, uint32_t n)
{
    w->rows = calloc((size_t)n + 1, sizeof *w->rows);
    return w->rows ? PM_OK : PM_ENOMEM;
}

/* What every row of one what-if shares, read-only while rows are made
 * side by side: each row changes its own copy of the graph. */
typedef struct whatif_job {
    const pm_graph *g;        /* the plan's graph at the point's cores */
    const pm_graph *c;        /* one class, smallest cycles (whatif_copy) */
    const pm_sweep_opts *o;
    const pm_sweep_point *pt;
    pm_sweep_whatif *w;
    const int64_t *t;         /* node times on their cores of the point's map */
    pm_bound *b;              /* per delay row: the bound found */
    pm_floors *f;             /* per delay row: the floors found */
} whatif_job;

/* Rows of the binding loop's nodes, at most PM_SWEEP_MAX_WHATIF. */
static uint32_t whatif_nrows(const pm_sweep_limit *l)
{
    return l->nnodes < PM_SWEEP_MAX_WHATIF ? l->nnodes : PM_SWEEP_MAX_WHATIF;
}

/* Row i: node i of the loop `faster` cycles faster in a copy; floors
 * recomputed. */
static int whatif_floor_row(void *ctx, uint32_t i, pm_diag *diag)
{
    const whatif_job *j = ctx;
    const pm_sweep_limit *l = &j->pt->limit;
    pm_sweep_whatif *w = j->w;
    uint32_t v = l->nodes[i];
    int64_t old = j->c->nodes[v].cycles;
    pm_sweep_faster *row = &w->rows[i];
    *row = (pm_sweep_faster){v, old, whatif_less(old, w->faster), {0, 1}, {0, 1}, {0, 1}};
    pm_graph *c = NULL;
    pm_bound b;
    pm_floors f;
    memset(&b, 0, sizeof b);
    int rc = sweep_graph_clone(j->c, &c);
    if (rc == PM_OK) {
        c->nodes[v].cycles = row->new_cycles;
        rc = sweep_floors_of(c, j->pt->procs, &b, &f, diag);
    }
    if (rc == PM_OK) {
        bool loop = w->kind == PM_LIMIT_LOOP;
        row->after = loop ? (b.has_loop ? b.iteration_bound : pm_rat_int(0)) : f.lower_bound;
        row->floor_after = f.lower_bound;
        if (loop)
            row->loop_alone = whatif_ratio(l->cycles - (old - row->new_cycles), l->delays);
    }
    pm_bound_free(&b);
    pm_graph_destroy(c);
    return rc;
}

static int whatif_floor_rows(whatif_job *j, pm_diag *diag)
{
    uint32_t n = whatif_nrows(&j->pt->limit);
    int rc = whatif_rows(j->w, n);
    if (rc == PM_OK) {
        j->w->nrows = n;
        rc = sweep_for_each(j->o->jobs, n, whatif_floor_row, j, diag);
    }
    return rc;
}

/* The times each node takes on its core of map m. */
static int64_t *whatif_times(const pm_graph *g, const pm_map *m)
{
    int64_t *t = malloc(((size_t)g->nnodes + 1) * sizeof *t);
    for (uint32_t v = 0; t && v < g->nnodes; v++)
        t[v] = pm_graph_cycles_on(g, v, g->platform.core_class[m->core_of[v]]);
    return t;
}

/* One mapping row: the same map re-simulated with node v `cut` cycles
 * faster; the floors with it as much faster. */
static int whatif_resim(const pm_graph *g, pm_graph *c, const pm_sweep_opts *o, const pm_map *m,
                        int64_t *t, const pm_sweep_point *pt, pm_sweep_faster *row,
                        pm_diag *diag)
{
    uint32_t v = row->node;
    int64_t cut = row->cycles - row->new_cycles, oldc = c->nodes[v].cycles;
    t[v] = row->new_cycles;
    pm_sim_opts so = {.iterations = o->iterations, .node_cycles = t};
    pm_sim_result r;
    memset(&r, 0, sizeof r);
    int rc = pm_sim_run(g, m, &so, &r, diag);
    t[v] = row->cycles;
    if (rc == PM_OK)
        row->after = r.period;
    pm_sim_result_free(&r);
    pm_bound b;
    pm_floors f;
    memset(&b, 0, sizeof b);
    c->nodes[v].cycles = whatif_less(oldc, cut);
    if (rc == PM_OK)
        rc = sweep_floors_of(c, pt->procs, &b, &f, diag);
    c->nodes[v].cycles = oldc;
    if (rc == PM_OK)
        row->floor_after = f.lower_bound;
    pm_bound_free(&b);
    return rc;
}

/* Row i: the point's map re-simulated with node i of the loop faster. */
static int whatif_map_row(void *ctx, uint32_t i, pm_diag *diag)
{
    const whatif_job *j = ctx;
    const pm_sweep_limit *l = &j->pt->limit;
    uint32_t v = l->nodes[i], n = j->g->nnodes;
    int64_t cut = j->t[v] < j->w->faster ? j->t[v] : j->w->faster;
    pm_sweep_faster *row = &j->w->rows[i];
    *row = (pm_sweep_faster){v, j->t[v], j->t[v] - cut, whatif_ratio(l->cycles - cut, l->delays),
                             {0, 1}, {0, 1}};
    int64_t *t = malloc(((size_t)n + 1) * sizeof *t);
    pm_graph *c = NULL;
    int rc = t ? sweep_graph_clone(j->c, &c) : PM_ENOMEM;
    if (rc == PM_OK) {
        memcpy(t, j->t, n * sizeof *t);
        rc = whatif_resim(j->g, c, j->o, j->pt->map, t, j->pt, row, diag);
    }
    pm_graph_destroy(c);
    free(t);
    return rc;
}

static int whatif_map_rows(pm_plan *p, whatif_job *j, pm_diag *diag)
{
    /* the point's own cores: the map is simulated on them again */
    int rc = sweep_set_count(p, j->o, j->pt->count, diag);
    int64_t *t = rc == PM_OK ? whatif_times(p->graph, j->pt->map) : NULL;
    uint32_t n = whatif_nrows(&j->pt->limit);
    if (rc == PM_OK)
        rc = t ? whatif_rows(j->w, n) : PM_ENOMEM;
    if (rc == PM_OK) {
        j->w->nrows = n;
        j->g = p->graph;
        j->t = t;
        rc = sweep_for_each(j->o->jobs, n, whatif_map_row, j, diag);
    }
    j->t = NULL;
    free(t);
    return rc;
}

static int whatif_keep_nodes(uint32_t **dst, uint32_t *n, const uint32_t *src, uint32_t len)
{
    free(*dst);
    *dst = malloc(((size_t)len + 1) * sizeof **dst);
    if (!*dst)
        return PM_ENOMEM;
    if (len)
        memcpy(*dst, src, len * sizeof **dst);
    *n = len;
    return PM_OK;
}

/* Row i: the bound with one more delay on loop edge i, in a copy. */
static int whatif_delay_row(void *ctx, uint32_t i, pm_diag *diag)
{
    const whatif_job *j = ctx;
    pm_graph *c = NULL;
    int rc = sweep_graph_clone(j->c, &c);
    if (rc == PM_OK) {
        c->edges[j->pt->limit.edges[i]].delay++;
        rc = sweep_floors_of(c, j->pt->procs, &j->b[i], &j->f[i], diag);
    }
    pm_graph_destroy(c);
    return rc;
}

/* Keep the edge whose delay lowers the bound most (the first on ties). */
static int whatif_delay_pick(const whatif_job *j, uint32_t n)
{
    pm_sweep_whatif *w = j->w;
    int rc = PM_OK;
    for (uint32_t i = 0; rc == PM_OK && i < n; i++) {
        const pm_bound *b = &j->b[i];
        if (w->has_delay && pm_rat_cmp(b->iteration_bound, w->delay_bound) >= 0)
            continue;
        w->has_delay = true;
        w->delay_edge = j->pt->limit.edges[i];
        w->delay_bound = b->iteration_bound;
        w->delay_floor = j->f[i].lower_bound;
        if (b->ncritical > 0)
            rc = whatif_keep_nodes(&w->delay_next, &w->ndelay_next, b->critical[0].nodes,
                                   b->critical[0].len);
    }
    return rc;
}

/* One more delay on the loop edge where it lowers the bound most. */
static int whatif_delay(whatif_job *j, pm_diag *diag)
{
    const pm_sweep_limit *l = &j->pt->limit;
    uint32_t n = l->nedges < WHATIF_MAX_EDGES ? l->nedges : WHATIF_MAX_EDGES;
    j->b = calloc((size_t)n + 1, sizeof *j->b);
    j->f = calloc((size_t)n + 1, sizeof *j->f);
    int rc = j->b && j->f ? PM_OK : PM_ENOMEM;
    if (rc == PM_OK)
        rc = sweep_for_each(j->o->jobs, n, whatif_delay_row, j, diag);
    if (rc == PM_OK)
        rc = whatif_delay_pick(j, n);
    for (uint32_t i = 0; j->b && i < n; i++)
        pm_bound_free(&j->b[i]);
    free(j->b), j->b = NULL;
    free(j->f), j->f = NULL;
    j->w->delay_loop_alone = whatif_ratio(l->cycles, l->delays + 1);
    return rc;
}

/* ---- the next bottleneck ------------------------------------------------ */

typedef struct whatif_cand {
    pm_limit_kind kind;
    pm_rat value;
    const uint32_t *nodes;
    uint32_t n;
} whatif_cand;

static bool whatif_same_set(const uint32_t *a, uint32_t na, const uint32_t *b, uint32_t nb)
{
    if (na != nb)
        return false;
    for (uint32_t i = 0; i < na; i++) {
        bool found = false;
        for (uint32_t j = 0; j < nb && !found; j++)
            found = a[i] == b[j];
        if (!found)
            return false;
    }
    return true;
}

/* Another loop as bad as the binding one, else the next part's worst. */
static bool whatif_other_loop(const pm_bound *b, const pm_sweep_limit *l, whatif_cand *c)
{
    for (uint32_t i = 0; i < b->ncritical; i++)
        if (!whatif_same_set(b->critical[i].nodes, b->critical[i].len, l->nodes, l->nnodes)) {
            *c = (whatif_cand){PM_LIMIT_LOOP, b->iteration_bound, b->critical[i].nodes,
                               b->critical[i].len};
            return true;
        }
    if (b->nparts < 2)
        return false;
    *c = (whatif_cand){PM_LIMIT_LOOP, b->parts[1].bound, b->parts[1].worst.nodes,
                       b->parts[1].worst.len};
    return true;
}

/* Second-largest node time (smallest cycles), PM_NONE when alone. */
static uint32_t whatif_second_node(const pm_graph *c, uint32_t largest)
{
    uint32_t best = PM_NONE;
    for (uint32_t v = 0; v < c->nnodes; v++)
        if (v != largest && (best == PM_NONE || c->nodes[v].cycles > c->nodes[best].cycles))
            best = v;
    return best;
}

static int whatif_pick(pm_sweep_whatif *w, const whatif_cand *cand, uint32_t n)
{
    const whatif_cand *best = NULL;
    for (uint32_t i = 0; i < n; i++)
        if (!best || pm_rat_cmp(cand[i].value, best->value) > 0)
            best = &cand[i];
    if (!best)
        return PM_OK;
    w->has_next = true;
    w->next_kind = best->kind;
    w->next_value = best->value;
    return whatif_keep_nodes(&w->next_nodes, &w->nnext_nodes, best->nodes, best->n);
}

/* Candidates for what binds once the limit is out of the way; the largest
 * wins (the first listed on ties).  A mapping's next is its lower bound. */
static int whatif_next(const pm_graph *c, const pm_bound *b, const pm_sweep_point *pt,
                       pm_sweep_whatif *w)
{
    const pm_floors *f = &pt->floors;
    whatif_cand cand[4];
    uint32_t n = 0, big = b->largest_node, second = whatif_second_node(c, big);
    const pm_loop *crit = b->ncritical ? &b->critical[0] : NULL;
    whatif_cand loop = {PM_LIMIT_LOOP, f->loop, crit ? crit->nodes : NULL, crit ? crit->len : 0};
    whatif_cand node = {PM_LIMIT_NODE, f->node, &b->largest_node, big != PM_NONE};
    whatif_cand cores = {PM_LIMIT_CORES, f->cores, NULL, 0};
    bool has_loop = f->has_loop && crit;
    /* a loop through transfers: a better map reaches down to the floors */
    bool map_loop = pt->limit.kind == PM_LIMIT_LOOP && pt->limit.nhops > 0;
    switch (map_loop ? PM_LIMIT_MAPPING : pt->limit.kind) {
    case PM_LIMIT_LOOP:
        n += whatif_other_loop(b, &pt->limit, &cand[n]);
        cand[n++] = node, cand[n++] = cores;
        break;
    case PM_LIMIT_NODE:
        if (has_loop)
            cand[n++] = loop;
        if (second != PM_NONE)
            cand[n++] = (whatif_cand){PM_LIMIT_NODE, pm_rat_int(c->nodes[second].cycles),
                                      &second, 1};
        cand[n++] = cores;
        break;
    case PM_LIMIT_CORES:
        if (has_loop)
            cand[n++] = loop;
        cand[n++] = node;
        break;
    case PM_LIMIT_MAPPING:
    case PM_LIMIT_BUS:
        cand[n++] = f->binding == PM_FLOOR_LOOP && has_loop ? loop
                    : f->binding == PM_FLOOR_NODE       ? node : cores;
        break;
    }
    return whatif_pick(w, cand, n);
}

int sweep_whatif_run(pm_plan *p, const pm_sweep_opts *o, pm_sweep *s, pm_diag *diag)
{
    pm_sweep_whatif *w = &s->whatif;
    uint32_t at = s->saturation;
    /* all cores busy there: explain the first core count that did not help */
    if (s->points[at].limit.kind == PM_LIMIT_CORES && s->saturation_reached &&
        at + 1 < s->npoints)
        at++;
    const pm_sweep_point *pt = &s->points[at];
    pm_graph *c = NULL;
    int rc = whatif_copy(p->graph, &c);
    if (rc != PM_OK)
        return rc;
    w->present = true;
    w->point = at;
    w->kind = pt->limit.kind;
    w->faster = o->faster > 0 ? o->faster : PM_SWEEP_DEFAULT_FASTER;
    /* a loop through transfers is a loop of the map: re-simulate it */
    bool through_map = w->kind == PM_LIMIT_MAPPING ||
                       (w->kind == PM_LIMIT_LOOP && pt->limit.nhops > 0);
    w->same_map = through_map && pt->limit.delays > 0;
    whatif_job j = {p->graph, c, o, pt, w, NULL, NULL, NULL};
    if (w->same_map)
        rc = whatif_map_rows(p, &j, diag);
    else if (w->kind == PM_LIMIT_LOOP || w->kind == PM_LIMIT_NODE)
        rc = whatif_floor_rows(&j, diag);
    if (rc == PM_OK && w->kind == PM_LIMIT_LOOP)
        rc = whatif_delay(&j, diag);
    if (rc == PM_OK)
        rc = whatif_next(c, &s->bound, pt, w);
    pm_graph_destroy(c);
    return rc;
}
