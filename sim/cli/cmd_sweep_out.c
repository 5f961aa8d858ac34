/*
 * cmd_sweep_out.c - the sweep command's machine and file outputs: JSON
 * (docs/schema.json `sweep`: points with procs, period, lower_bound, limit {kind,
 * nodes}, plus extras), CSV (one row per core count) and the SVG plot
 * (pm_plot: period and floors, throughput, against the core count).
 */
#include "cli.h"
#include "pacemap/units.h"
#include "cmd_sweep_internal.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "pacemap/json.h"
#include "pacemap/plot.h"

/* ---- JSON --------------------------------------------------------------- */

static void sw_json_nodes(pm_json *j, const pm_graph *g, const uint32_t *v, uint32_t n)
{
    pm_json_array_begin(j);
    for (uint32_t i = 0; i < n; i++)
        pm_json_string(j, pm_graph_node_name(g, v[i]));
    pm_json_array_end(j);
}

static void sw_json_hops(pm_json *j, const pm_graph *g, const pm_sweep_limit *l)
{
    pm_json_key(j, "transfers");
    pm_json_array_begin(j);
    for (uint32_t i = 0; i < l->nhops; i++) {
        const pm_sweep_hop *h = &l->hops[i];
        pm_json_object_begin(j);
        pm_json_key(j, "from");
        pm_json_string(j, pm_graph_node_name(g, g->edges[h->edge].src));
        pm_json_key(j, "to");
        pm_json_string(j, pm_graph_node_name(g, g->edges[h->edge].dst));
        pm_json_key(j, "from_core");
        pm_json_uint(j, h->from_core);
        pm_json_key(j, "to_core");
        pm_json_uint(j, h->to_core);
        pm_json_key(j, "cost");
        pm_json_int(j, h->cost);
        pm_json_key(j, "bus");
        pm_json_bool(j, h->bus);
        pm_json_object_end(j);
    }
    pm_json_array_end(j);
}

static void sw_json_orders(pm_json *j, const pm_graph *g, const pm_sweep_limit *l)
{
    pm_json_key(j, "core_order");
    pm_json_array_begin(j);
    for (uint32_t i = 0; i < l->norders; i++) {
        pm_json_object_begin(j);
        pm_json_key(j, "core");
        pm_json_uint(j, l->orders[i].core);
        pm_json_key(j, "from");
        pm_json_string(j, pm_graph_node_name(g, l->orders[i].from));
        pm_json_key(j, "to");
        pm_json_string(j, pm_graph_node_name(g, l->orders[i].to));
        pm_json_key(j, "next_iteration");
        pm_json_bool(j, l->orders[i].wraps);
        pm_json_object_end(j);
    }
    pm_json_array_end(j);
}

static void sw_json_chain(pm_json *j, const pm_graph *g, const pm_sweep_limit *l)
{
    pm_json_key(j, "cycles");
    pm_json_int(j, l->cycles);
    pm_json_key(j, "delays");
    pm_json_int(j, l->delays);
    pm_json_key(j, "exact");
    pm_json_bool(j, l->exact);
    sw_json_hops(j, g, l);
}

static void sw_json_limit(pm_json *j, const pm_graph *g, const pm_sweep_point *p)
{
    const pm_sweep_limit *l = &p->limit;
    pm_json_key(j, "limit");
    pm_json_object_begin(j);
    pm_json_key(j, "kind");
    pm_json_string(j, pm_sweep_limit_name(l->kind));
    pm_json_key(j, "nodes");
    sw_json_nodes(j, g, l->nodes, l->nnodes);
    if (l->kind == PM_LIMIT_LOOP || l->kind == PM_LIMIT_MAPPING)
        sw_json_chain(j, g, l);
    if (l->kind == PM_LIMIT_CORES || l->kind == PM_LIMIT_NODE || l->kind == PM_LIMIT_BUS) {
        pm_json_key(j, "cycles");
        pm_json_int(j, l->cycles);
    }
    if (l->kind == PM_LIMIT_CORES) {
        pm_json_key(j, "core");
        pm_json_uint(j, p->busiest_core);
        pm_json_key(j, "run_cycles");
        pm_json_int(j, p->busiest_run);
        pm_json_key(j, "send_recv_cycles");
        pm_json_int(j, p->busiest - p->busiest_run);
    }
    if (l->kind == PM_LIMIT_MAPPING) {
        sw_json_orders(j, g, l);
        pm_json_key(j, "bus_waits");
        pm_json_uint(j, l->nbus_waits);
        bool opt = false;
        pm_rat pct;
        pm_json_key(j, "above_map_floor_pct");
        if (pm_bound_gap(p->period, p->floors.map_floor, &opt, &pct) == PM_OK)
            pm_json_rat(j, pct);
        else
            pm_json_null(j);
    }
    pm_json_object_end(j);
}

/* Whose map the point runs and what it leaves idle. */
static void sw_json_map(pm_json *j, const pm_graph *g, const pm_sweep *s,
                        const pm_sweep_point *p)
{
    if (s->vary_class != PM_NONE) {
        pm_json_key(j, "class_count");
        pm_json_object_begin(j);
        pm_json_key(j, "class");
        pm_json_string(j, g->platform.class_names[s->vary_class]);
        pm_json_key(j, "count");
        pm_json_uint(j, p->count);
        pm_json_object_end(j);
    }
    pm_json_key(j, "idle_cores");
    pm_json_uint(j, p->idle_cores);
    pm_json_key(j, "map_made_for");
    pm_json_uint(j, p->map_count);
    pm_json_key(j, "own_map_period");
    pm_json_rat(j, p->own_period);
    pm_json_key(j, "map_floor_kind");
    pm_json_string(j, pm_bound_floor_name(p->floors.map_binding));
    pm_json_key(j, "busiest_core");
    pm_json_object_begin(j);
    pm_json_key(j, "core");
    pm_json_uint(j, p->busiest_core);
    pm_json_key(j, "cycles");
    pm_json_int(j, p->busiest);
    pm_json_object_end(j);
}

static void sw_json_point(pm_json *j, const pm_graph *g, const pm_sweep *s,
                          const pm_sweep_point *p)
{
    pm_json_object_begin(j);
    pm_json_key(j, "procs");
    pm_json_uint(j, p->procs);
    pm_json_key(j, "period");
    pm_json_rat(j, p->period);
    pm_json_key(j, "lower_bound");
    pm_json_rat(j, p->floors.lower_bound);
    bool opt = false;
    pm_rat pct;
    pm_json_key(j, "map_floor");
    pm_json_rat(j, p->floors.map_floor);
    pm_json_key(j, "map_optimal");
    pm_json_bool(j, p->steady && pm_bound_gap(p->period, p->floors.map_floor, &opt, &pct) == PM_OK
                        && opt);
    sw_json_limit(j, g, p);
    sw_json_map(j, g, s, p);
    pm_json_key(j, "steady");
    pm_json_bool(j, p->steady);
    pm_json_key(j, "speedup");
    pm_json_double(j, p->speedup);
    pm_json_key(j, "efficiency");
    pm_json_double(j, p->efficiency);
    pm_json_key(j, "floors");
    pm_json_object_begin(j);
    pm_json_key(j, "loop");
    if (p->floors.has_loop)
        pm_json_rat(j, p->floors.loop);
    else
        pm_json_null(j);
    pm_json_key(j, "node");
    pm_json_rat(j, p->floors.node);
    pm_json_key(j, "cores");
    pm_json_rat(j, p->floors.cores);
    pm_json_object_end(j);
    pm_json_key(j, "latency");
    pm_json_int(j, p->latency);
    pm_json_key(j, "cross_core_edges");
    pm_json_uint(j, p->cross_edges);
    pm_json_object_end(j);
}

static void sw_json_rows(pm_json *j, const pm_graph *g, const pm_sweep_whatif *w)
{
    pm_json_key(j, "faster");
    pm_json_array_begin(j);
    for (uint32_t i = 0; i < w->nrows; i++) {
        const pm_sweep_faster *r = &w->rows[i];
        pm_json_object_begin(j);
        pm_json_key(j, "node");
        pm_json_string(j, pm_graph_node_name(g, r->node));
        pm_json_key(j, "cycles");
        pm_json_int(j, r->cycles);
        pm_json_key(j, "new_cycles");
        pm_json_int(j, r->new_cycles);
        pm_json_key(j, w->same_map ? "period" : w->kind == PM_LIMIT_LOOP
                                                                ? "iteration_bound"
                                                                : "lower_bound");
        pm_json_rat(j, r->after);
        if (w->kind != PM_LIMIT_NODE) {
            pm_json_key(j, "loop_alone");
            pm_json_rat(j, r->loop_alone);
        }
        pm_json_key(j, "lower_bound_after");
        pm_json_rat(j, r->floor_after);
        pm_json_object_end(j);
    }
    pm_json_array_end(j);
}

static void sw_json_delay(pm_json *j, const pm_graph *g, const pm_sweep_whatif *w)
{
    pm_json_key(j, "one_more_delay");
    if (!w->has_delay) {
        pm_json_null(j);
        return;
    }
    pm_json_object_begin(j);
    pm_json_key(j, "from");
    pm_json_string(j, pm_graph_node_name(g, g->edges[w->delay_edge].src));
    pm_json_key(j, "to");
    pm_json_string(j, pm_graph_node_name(g, g->edges[w->delay_edge].dst));
    pm_json_key(j, "iteration_bound");
    pm_json_rat(j, w->delay_bound);
    pm_json_key(j, "loop_alone");
    pm_json_rat(j, w->delay_loop_alone);
    pm_json_key(j, "lower_bound_after");
    pm_json_rat(j, w->delay_floor);
    pm_json_key(j, "next_loop");
    sw_json_nodes(j, g, w->delay_next, w->ndelay_next);
    pm_json_key(j, "caution");
    pm_json_string(j, "an extra delay in a feedback loop changes the algorithm's response");
    pm_json_object_end(j);
}

static void sw_json_whatif(pm_json *j, const sw_report *r)
{
    const pm_sweep_whatif *w = &r->s->whatif;
    pm_json_key(j, "what_if");
    pm_json_object_begin(j);
    pm_json_key(j, "procs");
    pm_json_uint(j, r->s->points[w->point].procs);
    pm_json_key(j, "kind");
    pm_json_string(j, pm_sweep_limit_name(w->kind));
    pm_json_key(j, "faster_by");
    pm_json_int(j, w->faster);
    sw_json_rows(j, r->g, w);
    sw_json_delay(j, r->g, w);
    pm_json_key(j, "next");
    if (w->has_next) {
        pm_json_object_begin(j);
        pm_json_key(j, "kind");
        pm_json_string(j, pm_sweep_limit_name(w->next_kind));
        pm_json_key(j, "value");
        pm_json_rat(j, w->next_value);
        pm_json_key(j, "nodes");
        sw_json_nodes(j, r->g, w->next_nodes, w->nnext_nodes);
        pm_json_object_end(j);
    } else {
        pm_json_null(j);
    }
    pm_json_object_end(j);
}

static void sw_json_saturation(pm_json *j, const sw_report *r)
{
    const pm_sweep *s = r->s;
    pm_json_key(j, "saturation");
    pm_json_object_begin(j);
    pm_json_key(j, "procs");
    pm_json_uint(j, s->points[s->saturation].procs);
    pm_json_key(j, "period");
    pm_json_rat(j, s->points[s->saturation].period);
    pm_json_key(j, "reached");
    pm_json_bool(j, s->saturation_reached);
    pm_json_key(j, "proven");
    pm_json_bool(j, s->saturation_proven);
    pm_json_object_end(j);
    pm_json_key(j, "best_procs");
    pm_json_uint(j, s->points[s->best].procs);
}

void sw_write_json(const sw_report *r, FILE *out)
{
    pm_json j;
    pm_json_init(&j, out, 2);
    pm_json_object_begin(&j);
    pm_json_key(&j, "file");
    pm_json_string(&j, r->file);
    pm_json_key(&j, "iteration_bound");
    if (r->s->bound.has_loop)
        pm_json_rat(&j, r->s->bound.iteration_bound);
    else
        pm_json_null(&j);
    pm_json_key(&j, "total_cycles");
    pm_json_int(&j, r->s->bound.total_cycles);
    pm_json_key(&j, "efficiency_base_procs");
    pm_json_uint(&j, r->s->points[0].procs);
    pm_json_key(&j, "points");
    pm_json_array_begin(&j);
    for (uint32_t i = 0; i < r->s->npoints; i++)
        sw_json_point(&j, r->g, r->s, &r->s->points[i]);
    pm_json_array_end(&j);
    sw_json_saturation(&j, r);
    if (r->s->whatif.present)
        sw_json_whatif(&j, r);
    pm_json_key(&j, "caution");
    pm_json_string(&j, cli_caution);
    pm_json_object_end(&j);
    pm_json_finish(&j);
}

/* ---- SVG ---------------------------------------------------------------- */

enum { SW_PERIOD, SW_LOOP, SW_CORES, SW_NODE, SW_BUDGET, SW_THR, SW_THR_MAX, SW_THR_NEED,
       SW_X, SW_NCOLS };

typedef struct sw_plot_data {
    double *col[SW_NCOLS];
    double scale;       /* throughput = scale / period, in the unit of ylabel */
    char ylabel[96], subtitle[160], title[160];
    pm_plot_series top[5], bottom[3];
    pm_plot_panel panels[2];
} sw_plot_data;

static double sw_thr(double scale, pm_rat period)
{
    double p = pm_rat_to_double(period);
    return p > 0 ? scale / p : NAN;
}

/* Iterations per second at the clock in k or M when large (the best
 * possible rate decides), else iterations per 1000 cycles. */
static double sw_thr_scale(const sw_report *r, sw_plot_data *d)
{
    double clock = (double)r->g->platform.clock_hz, best = 0.0;
    if (!clock) {
        snprintf(d->ylabel, sizeof d->ylabel, "throughput (iterations per 1000 cycles)");
        return 1000.0;
    }
    for (uint32_t i = 0; i < r->s->npoints; i++) {
        double lb = pm_rat_to_double(r->s->points[i].floors.lower_bound);
        if (lb > 0 && clock / lb > best)
            best = clock / lb;
    }
    const char *unit = best >= 1e6 ? "million " : best >= 1e3 ? "thousand " : "";
    char clk[PM_UNITS_LEN];
    snprintf(d->ylabel, sizeof d->ylabel, "%siterations per second at %s", unit,
             pm_units_freq(clk, sizeof clk, r->g->platform.clock_hz));
    return best >= 1e6 ? clock / 1e6 : best >= 1e3 ? clock / 1e3 : clock;
}

static void sw_plot_columns(const sw_report *r, sw_plot_data *d)
{
    d->scale = sw_thr_scale(r, d);
    for (uint32_t i = 0; i < r->s->npoints; i++) {
        const pm_sweep_point *p = &r->s->points[i];
        const pm_floors *f = &p->floors;
        d->col[SW_X][i] = p->procs;
        d->col[SW_PERIOD][i] = pm_rat_to_double(p->period);
        d->col[SW_LOOP][i] = f->has_loop ? pm_rat_to_double(f->loop) : NAN;
        d->col[SW_CORES][i] = pm_rat_to_double(f->cores);
        d->col[SW_NODE][i] = pm_rat_to_double(f->node);
        d->col[SW_BUDGET][i] = f->has_budget ? pm_rat_to_double(f->budget) : NAN;
        d->col[SW_THR][i] = sw_thr(d->scale, p->period);
        d->col[SW_THR_MAX][i] = sw_thr(d->scale, f->lower_bound);
        d->col[SW_THR_NEED][i] = f->has_budget ? sw_thr(d->scale, f->budget) : NAN;
    }
}

static void sw_plot_series(const sw_report *r, sw_plot_data *d)
{
    const pm_floors *f = &r->s->points[0].floors;
    size_t t = 0, b = 0;
    d->top[t++] = (pm_plot_series){"achieved period (simulated)", d->col[SW_PERIOD], true, 1};
    if (f->has_loop)
        d->top[t++] = (pm_plot_series){"iteration bound (loops)", d->col[SW_LOOP], false, 2};
    d->top[t++] = (pm_plot_series){r->g->platform.nclasses > 1 ? "work floor (classes)"
                                                               : "total work / P",
                                   d->col[SW_CORES], false, 3};
    d->top[t++] = (pm_plot_series){"largest node", d->col[SW_NODE], false, 4};
    if (f->has_budget)
        d->top[t++] = (pm_plot_series){"budget (clock / rate)", d->col[SW_BUDGET], false, 5};
    d->bottom[b++] = (pm_plot_series){"achieved throughput", d->col[SW_THR], true, 1};
    d->bottom[b++] = (pm_plot_series){"best possible (1 / lower bound)", d->col[SW_THR_MAX],
                                      false, 6};
    if (f->has_budget)
        d->bottom[b++] = (pm_plot_series){"required rate", d->col[SW_THR_NEED], false, 5};
    d->panels[0] = (pm_plot_panel){"period (cycles per iteration)", d->top, t};
    d->panels[1] = (pm_plot_panel){d->ylabel, d->bottom, b};
}

static void sw_plot_titles(const sw_report *r, sw_plot_data *d)
{
    const pm_sweep *s = r->s;
    const pm_sweep_point *p = &s->points[s->saturation];
    const char *name = r->g->platform.title ? r->g->platform.title : r->file;
    snprintf(d->title, sizeof d->title, "How far more cores help: %.100s", name);
    if (s->saturation_reached)
        snprintf(d->subtitle, sizeof d->subtitle,
                 "Period against the core count. Saturation at P = %u, limited by %s.",
                 p->procs, pm_sweep_limit_name(p->limit.kind));
    else
        snprintf(d->subtitle, sizeof d->subtitle,
                 "Period against the core count. Still falling at P = %u.", p->procs);
}

int sw_write_svg(const void *ctx, FILE *out)
{
    const sw_report *r = ctx;
    size_t n = r->s->npoints;
    sw_plot_data d;
    memset(&d, 0, sizeof d);
    double *block = malloc(SW_NCOLS * n * sizeof *block);
    if (!block)
        return PM_ENOMEM;
    for (size_t c = 0; c < SW_NCOLS; c++)
        d.col[c] = block + c * n;
    sw_plot_columns(r, &d);
    sw_plot_series(r, &d);
    sw_plot_titles(r, &d);
    pm_plot p = {d.title, d.subtitle, "cores (P)", d.col[SW_X], n, true, d.panels, 2,
                 cli_caution};
    int rc = pm_plot_write_svg(&p, out);
    free(block);
    return rc;
}
