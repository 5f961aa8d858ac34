/*
 * cmd_simulate.c - `pacemap simulate FILE [-p N] [-n ITER] [--map F]
 * [--fifo N] [--paced [--jitter CYCLES] [--seed N] [--fit-buffers]] [--emit-map F]
 * [--vcd F] [--svg F] [--json]`: run the map (the list
 * scheduler's, or a hand map) self-timed over many iterations and report
 * the period against the floors, latency, utilisation, buffer depths, bus
 * load and the chain that sets the period; write a VCD waveform and an SVG
 * Gantt chart of the first iterations through pm_outfile.  The simulation
 * itself is in sim/engine/ (entry point sim.c); this file only loads,
 * calls and prints.
 */
#include "cli.h"
#include "cmd_simulate_paced.h"
#include "pacemap/units.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "pacemap/bound.h"
#include "pacemap/gantt.h"
#include "pacemap/json.h"
#include "pacemap/map.h"
#include "pacemap/outfile.h"
#include "pacemap/sched.h"
#include "pacemap/sim.h"
#include "pacemap/vcd.h"

#define SM_NAME_W 20
#define SM_RECORD 6      /* iterations kept for the charts */
#define SM_CHAIN_SHOWN 12

typedef struct sm_args {
    uint32_t procs, iterations, fifo;
    bool procs_set, json, no_refine, jitter_set, seed_set, fifo_set;
    const char *map, *vcd, *svg, *mapper;
    sp_args sp;      /* --paced and what goes with it */
} sm_args;

typedef struct sm_run {
    const char *file;
    pm_plan scn;      /* the scenario; g is its (expanded) graph */
    pm_graph *g;
    pm_map *m;
    pm_sim_result r;
    pm_bound b;
    pm_floors f;
    bool has_bound;
    uint32_t fifo;
    sp_state sp;      /* the paced run, when asked */
} sm_run;

/* ---- charts ------------------------------------------------------------- */

typedef struct sm_chart {
    pm_gantt chart;
    char **names, **labels;
    pm_gantt_box *boxes;
    pm_gantt_arrow *arrows;
    uint32_t nlanes;
    size_t nlabels;
} sm_chart;

static void sm_chart_free(sm_chart *c)
{
    for (uint32_t i = 0; c->names && i < c->nlanes; i++)
        free(c->names[i]);
    for (size_t i = 0; c->labels && i < c->nlabels; i++)
        free(c->labels[i]);
    free(c->names), free(c->labels), free(c->boxes), free(c->arrows);
}

static char *sm_edge_label(const pm_graph *g, uint32_t e)
{
    const char *a = pm_graph_node_name(g, g->edges[e].src), *b = pm_graph_node_name(g, g->edges[e].dst);
    size_t len = strlen(a) + strlen(b) + 2;
    char *s = malloc(len);
    if (s)
        snprintf(s, len, "%s>%s", a, b);
    return s;
}

/* Lanes: the cores, then the bus; bus transfers become boxes on it. */
static int sm_chart_lanes(const sm_run *s, sm_chart *c)
{
    c->nlanes = s->m->ncores + (s->r.bus ? 1 : 0);
    c->names = calloc(c->nlanes + 1, sizeof *c->names);
    if (!c->names)
        return PM_ENOMEM;
    for (uint32_t i = 0; i < c->nlanes; i++) {
        c->names[i] = malloc(24);
        if (!c->names[i])
            return PM_ENOMEM;
        if (i < s->m->ncores)
            snprintf(c->names[i], 24, "core %u", i);
        else
            snprintf(c->names[i], 24, "bus");
    }
    return PM_OK;
}

/* The run the charts show: the paced one when there is one. */
static const pm_sim_result *sm_charted(const sm_run *s)
{
    return s->sp.on ? &s->sp.r : &s->r;
}

static int sm_chart_make(const sm_run *s, sm_chart *c)
{
    const pm_sim_result *r = sm_charted(s);
    memset(c, 0, sizeof *c);
    size_t nt = r->ntransfers;
    c->boxes = calloc(r->ntrace + nt + 1, sizeof *c->boxes);
    c->arrows = calloc(nt + 1, sizeof *c->arrows);
    c->labels = calloc(nt + 1, sizeof *c->labels);
    if (!c->boxes || !c->arrows || !c->labels || sm_chart_lanes(s, c))
        return PM_ENOMEM;
    size_t nb = 0;
    for (size_t i = 0; i < r->ntrace; i++) {
        const pm_sim_firing *f = &r->trace[i];
        c->boxes[nb++] = (pm_gantt_box){ f->core, f->start, f->end,
                                         pm_graph_node_name(s->g, f->node), (uint32_t)f->iteration };
    }
    for (size_t i = 0; i < nt; i++) {
        const pm_sim_transfer *t = &r->transfers[i];
        const pm_edge *e = &s->g->edges[t->edge];
        c->labels[c->nlabels++] = sm_edge_label(s->g, t->edge);
        if (!c->labels[i])
            return PM_ENOMEM;
        c->arrows[i] = (pm_gantt_arrow){ s->m->core_of[e->src], s->m->core_of[e->dst], t->request,
                                         t->arrival, c->labels[i] };
        if (r->bus)
            c->boxes[nb++] = (pm_gantt_box){ s->m->ncores, t->grant, t->arrival, c->labels[i],
                                             (uint32_t)t->iteration };
    }
    c->chart = (pm_gantt){ s->g->platform.title ? s->g->platform.title : s->file, c->nlanes,
                           (const char *const *)c->names, c->boxes, nb, c->arrows, nt,
                           s->g->platform.clock_hz, cli_caution };
    return PM_OK;
}

static int sm_write_svg(const void *ctx, FILE *f)
{
    const sm_run *s = ctx;
    sm_chart c;
    int rc = sm_chart_make(s, &c);
    const pm_sim_paced *pc = &sm_charted(s)->pace;
    if (rc == PM_OK) /* a paced run marks its releases */
        rc = pm_gantt_write_svg_marked(&c.chart, pc->releases, pc->nreleases, f);
    sm_chart_free(&c);
    return rc;
}

static int sm_write_vcd(const void *ctx, FILE *f)
{
    const sm_run *s = ctx;
    return pm_vcd_write(s->g, s->m, sm_charted(s), f);
}

/* ---- human text --------------------------------------------------------- */

static double sm_ratio(pm_rat a, pm_rat b)
{
    return b.num ? pm_rat_to_double(a) / pm_rat_to_double(b) : 0.0;
}

/* The map floor and how close the period comes: optimal only when the
 * steady period equals it exactly (pm_bound_gap). */
static void sm_text_map_floor(const sm_run *s, const pm_sim_result *r)
{
    bool opt = false;
    pm_rat pct = pm_rat_int(0);
    int rc = pm_bound_gap(r->period, s->f.map_floor, &opt, &pct);
    printf("map floor      %.6g for %u cores (%s): ", pm_rat_to_double(s->f.map_floor),
           s->f.procs, pm_bound_floor_name(s->f.map_binding));
    if (rc != PM_OK)
        printf("period is %.3f x the map floor\n", sm_ratio(r->period, s->f.map_floor));
    else if (opt && r->steady)
        printf("optimal (equals the proven floor)\n");
    else
        printf("within %.3g %% of the proven floor\n", pm_rat_to_double(pct));
}

static void sm_text_period(const sm_run *s)
{
    const pm_sim_result *r = &s->r;
    printf("period         %.6g cycles per iteration (%lld/%lld)", pm_rat_to_double(r->period),
           (long long)r->period.num, (long long)r->period.den);
    if (s->g->platform.clock_hz && r->period.num) {
        char t[PM_UNITS_LEN];
        printf(", %s", pm_units_cycles(t, sizeof t, pm_rat_to_double(r->period),
                                       s->g->platform.clock_hz));
    }
    putchar('\n');
    if (r->steady)
        printf("               steady from iteration %llu, repeats every %u iteration%s\n",
               (unsigned long long)r->transient, r->cyclicity, r->cyclicity > 1 ? "s" : "");
    else
        printf("               not steady within %llu iteration%s: average over the last half\n",
               (unsigned long long)r->iterations, r->iterations == 1 ? "" : "s");
    if (!r->uniform)
        printf("               parts run at different rates: tokens pile up on some edges"
               " (see --fifo)\n");
    if (s->has_bound && s->b.has_loop)
        printf("iteration bound %.6g (%lld/%lld): period is %.3f x the bound\n",
               pm_rat_to_double(s->b.iteration_bound), (long long)s->b.iteration_bound.num,
               (long long)s->b.iteration_bound.den, sm_ratio(r->period, s->b.iteration_bound));
    if (s->has_bound)
        printf("lower bound    %.6g for %u cores (%s): period is %.3f x the lower bound\n",
               pm_rat_to_double(s->f.lower_bound), s->f.procs, pm_bound_floor_name(s->f.binding),
               sm_ratio(r->period, s->f.lower_bound));
    if (s->has_bound)
        sm_text_map_floor(s, r);
    if (s->has_bound && s->f.has_budget)
        printf("budget         %.6g cycles per iteration: %s\n", pm_rat_to_double(s->f.budget),
               pm_rat_cmp(r->period, s->f.budget) <= 0 ? "met" : "NOT met");
    printf("latency        %lld cycles in steady state, %lld at most\n",
           (long long)r->latency_steady, (long long)r->latency_max);
}

static void sm_text_cores(const sm_run *s)
{
    printf("\n%-5s %6s %14s %12s\n", "core", "nodes", "busy/iter", "utilisation");
    for (uint32_t c = 0; c < s->r.ncores; c++)
        printf("%-5u %6u %14lld %11.1f%%\n", c, s->m->off[c + 1] - s->m->off[c],
               (long long)s->r.core_busy[c], 100.0 * s->r.utilisation[c]);
    if (s->r.bus)
        printf("%-5s %6s %14lld %11.1f%%\n", "bus", "", (long long)s->r.bus_busy,
               100.0 * s->r.bus_utilisation);
}

static void sm_text_edges(const sm_run *s)
{
    bool any = false;
    for (uint32_t e = 0; e < s->r.nedges; e++) {
        if (s->r.max_tokens[e] < 0)
            continue;
        if (!any)
            printf("\n%-*s %-*s %7s %12s\n", SM_NAME_W, "cross-core from", SM_NAME_W, "to",
                   "cores", "max tokens");
        any = true;
        const pm_edge *ed = &s->g->edges[e];
        char cores[24];
        snprintf(cores, sizeof cores, "%u>%u", s->m->core_of[ed->src], s->m->core_of[ed->dst]);
        printf("%-*.*s %-*.*s %7s %12lld\n", SM_NAME_W, SM_NAME_W,
               pm_graph_node_name(s->g, ed->src), SM_NAME_W, SM_NAME_W,
               pm_graph_node_name(s->g, ed->dst), cores, (long long)s->r.max_tokens[e]);
    }
    if (!any)
        printf("\nno cross-core edges\n");
}

static void sm_step_name(const sm_run *s, const pm_sim_step *st, char *buf, size_t len)
{
    if (st->node != PM_NONE) {
        snprintf(buf, len, "%.*s (core %u)", SM_NAME_W, pm_graph_node_name(s->g, st->node),
                 st->core);
        return;
    }
    const pm_edge *e = &s->g->edges[st->edge];
    snprintf(buf, len, "bus transfer %.*s>%.*s", SM_NAME_W, pm_graph_node_name(s->g, e->src),
             SM_NAME_W, pm_graph_node_name(s->g, e->dst));
}

/* Earliest first; each line says how the line above held it back. */
static void sm_text_chain(const sm_run *s)
{
    const pm_sim_result *r = &s->r;
    if (r->ncritical < 2)
        return;
    printf("\nwhat sets the period: %lld cycles over %llu iteration%s (%s)\n",
           (long long)r->critical_cycles, (unsigned long long)r->critical_delays,
           r->critical_delays == 1 ? "" : "s",
           r->critical_matches ? "matches the period" : "a chain of the last iterations");
    printf("  %-9s %-56s %s\n", "after", "firing or transfer", "iteration");
    uint32_t shown = 0;
    for (uint32_t i = r->ncritical; i-- > 0; shown++) {
        if (shown == SM_CHAIN_SHOWN && i > 0) {
            printf("  ... %u more\n", i);
            i = 0;
        }
        char name[80];
        sm_step_name(s, &r->critical[i], name, sizeof name);
        const char *via = i + 1 < r->ncritical ? pm_sim_cause_name(r->critical[i + 1].via) : "";
        printf("  %-9s %-56s %llu\n", via, name, (unsigned long long)r->critical[i].iteration);
    }
}

static void sm_text(const sm_run *s)
{
    const pm_platform *p = &s->g->platform;
    /* two lines: a long file name must not push the summary past 100 columns */
    printf("%s: %u nodes on %u cores\n%-14s %s, ", s->file, s->g->nnodes, s->m->ncores,
           "run", p->interconnect == PM_BUS ? "bus" : "point-to-point links");
    if (s->fifo)
        printf("FIFOs of %u token%s, ", s->fifo, s->fifo == 1 ? "" : "s");
    else
        printf("unbounded FIFOs, ");
    printf("%llu iteration%s\n", (unsigned long long)s->r.iterations,
           s->r.iterations == 1 ? "" : "s");
    sm_text_period(s);
    sm_text_cores(s);
    if (s->sp.on)
        sp_text(&s->scn, s->m, &s->b, s->has_bound, &s->r, &s->sp);
    else
        sm_text_edges(s);
    if (!cli_quiet) /* an explanation, not a result */
        sm_text_chain(s);
    cli_print_caution_block();
}

/* ---- JSON --------------------------------------------------------------- */

static void sm_json_edges(pm_json *j, const sm_run *s)
{
    pm_json_key(j, "max_tokens");
    pm_json_array_begin(j);
    for (uint32_t e = 0; e < s->r.nedges; e++) {
        if (s->r.max_tokens[e] < 0)
            continue;
        const pm_edge *ed = &s->g->edges[e];
        pm_json_object_begin(j);
        pm_json_key(j, "from");
        pm_json_string(j, pm_graph_node_name(s->g, ed->src));
        pm_json_key(j, "to");
        pm_json_string(j, pm_graph_node_name(s->g, ed->dst));
        pm_json_key(j, "edge");
        pm_json_uint(j, e);
        pm_json_key(j, "tokens");
        pm_json_int(j, s->r.max_tokens[e]);
        pm_json_object_end(j);
    }
    pm_json_array_end(j);
}

static void sm_json_chain(pm_json *j, const sm_run *s)
{
    pm_json_key(j, "critical_chain");
    pm_json_array_begin(j);
    for (uint32_t i = s->r.ncritical; i-- > 0;) {
        const pm_sim_step *st = &s->r.critical[i];
        pm_json_object_begin(j);
        if (st->node != PM_NONE) {
            pm_json_key(j, "node");
            pm_json_string(j, pm_graph_node_name(s->g, st->node));
        } else {
            pm_json_key(j, "transfer");
            pm_json_uint(j, st->edge);
        }
        pm_json_key(j, "iteration");
        pm_json_uint(j, st->iteration);
        pm_json_key(j, "core");
        pm_json_uint(j, st->core);
        pm_json_key(j, "then");
        if (i > 0)
            pm_json_string(j, pm_sim_cause_name(st->via));
        else
            pm_json_null(j);
        pm_json_object_end(j);
    }
    pm_json_array_end(j);
    pm_json_key(j, "critical_cycles");
    pm_json_int(j, s->r.critical_cycles);
    pm_json_key(j, "critical_delays");
    pm_json_uint(j, s->r.critical_delays);
    pm_json_key(j, "critical_matches");
    pm_json_bool(j, s->r.critical_matches);
}

static void sm_json_rat_or_null(pm_json *j, const char *key, bool ok, pm_rat v)
{
    pm_json_key(j, key);
    if (ok)
        pm_json_rat(j, v);
    else
        pm_json_null(j);
}

static void sm_json_floors(pm_json *j, const sm_run *s)
{
    bool opt = false;
    pm_rat pct;
    sm_json_rat_or_null(j, "map_floor", s->has_bound, s->f.map_floor);
    pm_json_key(j, "map_optimal");
    pm_json_bool(j, s->has_bound && s->r.steady &&
                    pm_bound_gap(s->r.period, s->f.map_floor, &opt, &pct) == PM_OK && opt);
    bool loop = s->has_bound && s->b.has_loop;
    sm_json_rat_or_null(j, "iteration_bound", loop, s->b.iteration_bound);
    sm_json_rat_or_null(j, "lower_bound", s->has_bound, s->f.lower_bound);
    pm_json_key(j, "period_over_bound");
    if (loop)
        pm_json_double(j, sm_ratio(s->r.period, s->b.iteration_bound));
    else
        pm_json_null(j);
    pm_json_key(j, "period_over_lower_bound");
    if (s->has_bound)
        pm_json_double(j, sm_ratio(s->r.period, s->f.lower_bound));
    else
        pm_json_null(j);
}

static void sm_json(const sm_run *s)
{
    const pm_sim_result *r = &s->r;
    pm_json j;
    pm_json_init(&j, stdout, 2);
    pm_json_object_begin(&j);
    pm_json_key(&j, "period");
    pm_json_rat(&j, r->period);
    pm_json_key(&j, "latency");
    pm_json_int(&j, r->latency_steady);
    pm_json_key(&j, "iterations");
    pm_json_uint(&j, r->iterations);
    pm_json_key(&j, "utilisation");
    pm_json_array_begin(&j);
    for (uint32_t c = 0; c < r->ncores; c++)
        pm_json_double(&j, r->utilisation[c]);
    pm_json_array_end(&j);
    if (s->sp.on)
        sp_json(&j, &s->scn, s->m, &s->sp);
    else
        sm_json_edges(&j, s);
    pm_json_key(&j, "steady");
    pm_json_bool(&j, r->steady);
    pm_json_key(&j, "cyclicity");
    pm_json_uint(&j, r->cyclicity);
    pm_json_key(&j, "transient");
    pm_json_uint(&j, r->transient);
    pm_json_key(&j, "uniform");
    pm_json_bool(&j, r->uniform);
    pm_json_key(&j, "latency_max");
    pm_json_int(&j, r->latency_max);
    pm_json_key(&j, "interconnect");
    pm_json_string(&j, r->bus ? "bus" : "p2p");
    pm_json_key(&j, "bus_utilisation");
    if (r->bus)
        pm_json_double(&j, r->bus_utilisation);
    else
        pm_json_null(&j);
    pm_json_key(&j, "fifo");
    pm_json_uint(&j, s->fifo);
    sm_json_floors(&j, s);
    sm_json_chain(&j, s);
    pm_json_key(&j, "caution");
    pm_json_string(&j, cli_caution);
    pm_json_object_end(&j);
    pm_json_finish(&j);
}

/* ---- the command -------------------------------------------------------- */

static int sm_map(const sm_args *a, sm_run *s, pm_diag *d)
{
    if (a->map)
        return pm_plan_map_read(&s->scn, a->map, &s->m, d);
    pm_plan_opts po;
    cli_mapper_choice("simulate", a->mapper, a->no_refine, &po); /* checked in main */
    return pm_plan_map(&s->scn, &po, NULL, &s->m, d);
}

static int sm_compute(const sm_args *a, sm_run *s)
{
    pm_diag d;
    pm_diag_clear(&d);
    int rc = sm_map(a, s, &d);
    if (rc == PM_OK) {
        pm_sim_opts o = { .iterations = a->iterations, .fifo_cap = a->fifo,
                          .record = a->iterations < SM_RECORD ? a->iterations : SM_RECORD,
                          .edge_cap = s->m->cap };
        rc = pm_sim_run(s->g, s->m, &o, &s->r, &d);
        if (rc == PM_OK && a->sp.on && (rc = sp_run(&s->scn, s->m, &o, &s->r, &a->sp, &s->sp)))
            return rc; /* reported */
    }
    if (rc == PM_OK && pm_bound_compute(s->g, NULL, &s->b, NULL) == PM_OK) {
        s->has_bound = pm_bound_floors(s->g, &s->b, s->m->ncores, &s->f) == PM_OK;
        if (!s->has_bound)
            pm_bound_free(&s->b);
    }
    if (rc != PM_OK) {
        if (!d.msg[0])
            pm_diag_set(&d, s->file, 0, 0, "%s", pm_error_name(rc));
        cli_error(&d);
    }
    return rc;
}

static int sm_main(const sm_args *a, sm_run *s)
{
    int rc = sm_compute(a, s);
    if (rc == PM_OK && a->sp.emit_map)
        rc = sp_emit_map(&s->scn, s->m, &a->sp, &s->sp);
    if (rc == PM_OK && a->vcd)
        rc = cli_write_file(a->vcd, sm_write_vcd, s);
    if (rc == PM_OK && a->svg)
        rc = cli_write_file(a->svg, sm_write_svg, s);
    if (rc != PM_OK)
        return cli_exit_for(rc == PM_EDEADLOCK ? PM_EDEADLOCK : rc);
    if (a->json)
        sm_json(s);
    else
        sm_text(s);
    return CLI_EXIT_OK;
}

int pm_cmd_simulate(int argc, char **argv)
{
    sm_args a = { .iterations = PM_SIM_DEFAULT_ITERATIONS, .sp = { .seed = 1 } };
    const cli_opt opts[] = {
        { "-p", "--procs", CLI_U32, &a.procs, &a.procs_set,
          "identical cores (default: the scenario's)", "N" },
        { "-n", "--iterations", CLI_U32, &a.iterations, NULL,
          "iterations to simulate (default 1000)", "ITER" },
        { "--map", NULL, CLI_STRING, &a.map, NULL, "run this map instead of scheduling", "F" },
        { "--fifo", NULL, CLI_U32, &a.fifo, &a.fifo_set,
          "tokens each cross-core edge can buffer (default: unbounded)", "N" },
        { "--mapper", NULL, CLI_STRING, &a.mapper, NULL,
          "period (default: lowest period, lags) or list (the list scheduler)", "NAME" },
        { "--paced", NULL, CLI_FLAG, &a.sp.on, NULL,
          "release input samples every clock/rate cycles: latency, overruns, buffers", NULL },
        { "--jitter", NULL, CLI_U32, &a.sp.jitter, &a.jitter_set,
          "with --paced: each release up to CYCLES late (seeded, repeatable)", "CYCLES" },
        { "--seed", NULL, CLI_U32, &a.sp.seed, &a.seed_set,
          "with --jitter: the seed of the lateness (default 1)", "N" },
        { "--fit-buffers", NULL, CLI_FLAG, &a.sp.fit, NULL,
          "with --paced: smallest capacity per cross-core edge that keeps up", NULL },
        { "--emit-map", NULL, CLI_STRING, &a.sp.emit_map, NULL,
          "write the map (with fitted capacities) to F", "F" },
        { "--no-refine", NULL, CLI_FLAG, &a.no_refine, NULL,
          "use the list schedule's map as it is (no search for a lower period)", NULL },
        { "--vcd", NULL, CLI_STRING, &a.vcd, NULL, "write a VCD waveform of the first iterations",
          "F" },
        { "--svg", NULL, CLI_STRING, &a.svg, NULL, "write a Gantt chart (SVG) of the first iterations",
          "F" },
        { "--json", NULL, CLI_FLAG, &a.json, NULL, "machine-readable output", NULL },
        { NULL, NULL, CLI_FLAG, NULL, NULL, NULL, NULL },
    };
    const cli_cmd cmd = { "simulate", "FILE [-p N] [-n ITER] [options]",
                          "Run the map self-timed over many iterations: period against the "
                          "floors, latency, utilisation, buffer depths.", opts };
    const char *file = NULL;
    int st = cli_parse(&cmd, argc, argv, &file);
    if (st >= 0)
        return st;
    if (a.iterations == 0) {
        cli_usage_error("-n must be at least 1");
        return CLI_EXIT_USAGE;
    }
    pm_plan_opts po;
    if (cli_mapper_choice("simulate", a.mapper, a.no_refine, &po) != CLI_EXIT_OK)
        return CLI_EXIT_USAGE;
    if (!a.sp.on && (a.jitter_set || a.seed_set || a.sp.fit)) {
        cli_usage_error("--jitter, --seed and --fit-buffers go with --paced");
        return CLI_EXIT_USAGE;
    }
    if (a.fifo_set && a.fifo == 0) {
        cli_usage_error("--fifo 0: a FIFO must hold at least one token "
                        "(leave --fifo out for unbounded FIFOs)");
        return CLI_EXIT_USAGE;
    }
    sm_run s;
    memset(&s, 0, sizeof s);
    s.file = file;
    s.fifo = a.fifo;
    st = cli_load_scenario(file, a.procs_set, a.procs, &s.scn);
    if (st != CLI_EXIT_OK)
        return st;
    s.g = s.scn.graph;
    st = sm_main(&a, &s);
    pm_sim_result_free(&s.r);
    sp_free(&s.sp);
    if (s.has_bound)
        pm_bound_free(&s.b);
    pm_map_destroy(s.m);
    pm_plan_free(&s.scn);
    return st;
}
