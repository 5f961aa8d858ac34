/*
 * cmd_run.c - `pacemap run FILE -p N [-n ITER] [--map F] [--cores LIST]
 * [--oversubscribe] [--host-map] [--ring N] [--json]`: execute a map on real cores and
 * compare the measured period with the model's prediction (docs/runner.md).
 *
 * Steps: load, map (--map, else pm_plan_map's), choose PUs,
 * calibrate, time each node alone, measure the runner's host costs,
 * (--host-map: map again with them), predict, run, rerun single-threaded
 * to check the outputs, report.  All computing is in runner.h/topo.h; this file parses,
 * orders the steps and prints.
 */
#include "cli.h"
#include "pacemap/units.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "pacemap/json.h"
#include "pacemap/kernels.h"
#include "pacemap/map.h"
#include "pacemap/runner.h"
#include "pacemap/sched.h"
#include "pacemap/topo.h"

#include "cmd_run_paced.h"

/* Timed samples per round of each node's time alone (pm_runner_node_times). */
#define CR_TIME_SAMPLES 15u

typedef struct cr_opts {
    uint32_t procs, iters, warmup, ring, block, watchdog;
    bool procs_set, iters_set, warmup_set, ring_set, block_set, watchdog_set;
    bool oversubscribe, json, no_refine, paced, host_map;
    const char *map, *cores, *nspc, *mapper;
    const char *file;
} cr_opts;

typedef struct cr_state {
    cr_opts o;
    pm_plan scn;       /* the scenario; g is its (expanded) graph */
    pm_graph *g;
    pm_map *m;
    bool scheduled_map;     /* made by pm_plan_map (else --map) */
    pm_plan_opts po;        /* how, from --mapper and --no-refine */
    pm_topo *topo;
    pm_topo_choice pus;
    pm_runner_config cfg;
    bool main_pinned, handoff_pinned;
    double *node_ns;
    uint32_t *depth, *cap;    /* per edge: model buffer depth, ring slots */
    double handoff, handoff_p99, predicted;
    double predicted_in_run;  /* the model again, with the in-run kernel times */
    pm_host_costs host;       /* the runner's own costs on this host */
    double scn_map_predicted; /* --host-map: the scenario's map under the host's costs */
    pm_runner_share *share;   /* ncores: the model's breakdown of the period */
    pm_runner_result res;
    bool outputs_match;
    crp_state paced;          /* --paced */
} cr_state;

static int cr_parse(cr_opts *o, int argc, char **argv)
{
    const cli_opt opts[] = {
        {"-p", "--procs", CLI_U32, &o->procs, &o->procs_set, "cores of the map", "N"},
        {"-n", "--iterations", CLI_U32, &o->iters, &o->iters_set,
         "measured iterations (default 1000)", "ITER"},
        {"--warmup", NULL, CLI_U32, &o->warmup, &o->warmup_set,
         "iterations before measuring (default ITER/10, 10..1000)", "N"},
        {"--map", NULL, CLI_STRING, &o->map, NULL, "run this map instead of the scheduler's",
         "F"},
        {"--cores", NULL, CLI_STRING, &o->cores, NULL,
         "use these processing units (OS indices, e.g. 0,2-3)", "LIST"},
        {"--oversubscribe", NULL, CLI_FLAG, &o->oversubscribe, NULL,
         "allow more map cores than processing units", NULL},
        {"--mapper", NULL, CLI_STRING, &o->mapper, NULL,
         "period (default: lowest period, lags) or list (the list scheduler)", "NAME"},
        {"--host-map", NULL, CLI_FLAG, &o->host_map, NULL,
         "map again with this host's measured costs and run that map", NULL},
        {"--no-refine", NULL, CLI_FLAG, &o->no_refine, NULL,
         "use the list schedule's map as it is (no search for a lower period)", NULL},
        {"--ring", NULL, CLI_U32, &o->ring, &o->ring_set,
         "slots per cross-core ring (default: the model's buffer depth + 1)", "N"},
        {"--block", NULL, CLI_U32, &o->block, &o->block_set, "samples per token (default 64)",
         "N"},
        {"--ns-per-cycle", NULL, CLI_STRING, &o->nspc, NULL,
         "host ns per node cycle for spin nodes (default 1e9/clock, else 1)", "X"},
        {"--watchdog", NULL, CLI_U32, &o->watchdog, &o->watchdog_set,
         "stop after this many ms without progress (default 2000)", "MS"},
        {"--paced", NULL, CLI_FLAG, &o->paced, NULL,
         "release iteration k at ceil(k*clock/rate) cycles: latency, overruns", NULL},
        {"--json", NULL, CLI_FLAG, &o->json, NULL, "machine-readable output", NULL},
        {NULL, NULL, CLI_FLAG, NULL, NULL, NULL, NULL},
    };
    const cli_cmd cmd = {"run", "FILE -p N [-n ITER] [--map F] [--cores LIST] "
                                "[--oversubscribe] [--host-map] [--ring N] [--json]",
                         "Run the map with pinned threads on this host's cores and compare "
                         "the measured period with the predicted one.", opts};
    return cli_parse(&cmd, argc, argv, &o->file);
}

static int cr_config(cr_state *s)
{
    cr_opts *o = &s->o;
    pm_runner_config *c = &s->cfg;
    pm_runner_config_default(c);
    c->iterations = o->iters_set ? o->iters : 1000u;
    c->warmup = o->warmup_set ? o->warmup
                              : (c->iterations / 10 < 10 ? 10 : c->iterations / 10 > 1000
                                                                    ? 1000 : c->iterations / 10);
    c->ring_capacity = o->ring_set ? o->ring : 0;
    c->block = o->block_set ? o->block : PM_RUNNER_BLOCK;
    c->watchdog_ms = o->watchdog_set ? o->watchdog : 0;
    if (c->iterations < 1 || c->block < 1 || c->block > PM_KERNEL_MAX_BLOCK) {
        cli_usage_error("run: -n must be at least 1 and --block from 1 to %u",
                        PM_KERNEL_MAX_BLOCK);
        return CLI_EXIT_USAGE;
    }
    uint64_t clock = s->g->platform.clock_hz;
    c->ns_per_cycle = clock ? 1e9 / (double)clock : 1.0;
    if (o->nspc) {
        char *end;
        double v = strtod(o->nspc, &end);
        if (*end || !(v > 0) || !isfinite(v)) {
            cli_usage_error("run: bad value '%s' for --ns-per-cycle", o->nspc);
            return CLI_EXIT_USAGE;
        }
        c->ns_per_cycle = v;
    }
    if (o->paced) {
        int st = crp_init(&s->scn, &s->paced);
        if (st != CLI_EXIT_OK)
            return st;
        c->pace = &s->paced.pace;
    }
    return CLI_EXIT_OK;
}

/* The map to run: --map, else the plan's (pm_plan_map as --mapper and
 * --no-refine say). */
static int cr_make_map(cr_state *s)
{
    pm_diag d;
    pm_diag_clear(&d);
    int rc;
    if (s->o.map) {
        s->scheduled_map = false;
        return cli_read_map(&s->scn, s->o.map, &s->m);
    }
    rc = pm_plan_map(&s->scn, &s->po, NULL, &s->m, &d);
    s->scheduled_map = true;
    if (rc != PM_OK) {
        if (!d.msg[0])
            pm_diag_set(&d, s->g->file, 0, 0, "cannot map the graph onto %u cores: %s",
                        s->g->platform.ncores, pm_error_name(rc));
        cli_error(&d);
        return cli_exit_for(rc);
    }
    return CLI_EXIT_OK;
}

/* A problem of this host, not of the scenario: one line without a file
 * position, exit 1 (cli_usage_error prints the bare "pacemap: error:"). */
static int cr_host_error(const char *what)
{
    cli_usage_error("run: %s", what);
    return CLI_EXIT_INPUT;
}

static int cr_choose_pus(cr_state *s)
{
    pm_diag d;
    pm_diag_clear(&d);
    uint32_t *list = NULL, n = 0;
    int rc = pm_topo_create(NULL, &s->topo);
    if (rc != PM_OK)
        return cr_host_error("hwloc cannot read this machine's topology; check that "
                             "/sys is mounted and readable, or run on another host");
    if (s->o.cores && (rc = pm_topo_parse_list(s->o.cores, &list, &n, &d)) != PM_OK) {
        cli_usage_error("run: --cores '%s': %s", s->o.cores, d.msg);
        return CLI_EXIT_USAGE;
    }
    rc = pm_topo_choose(s->topo, s->m->ncores, list, n, s->o.oversubscribe, &s->pus, &d);
    free(list);
    if (rc == PM_ENOMEM)
        return cli_exit_for(rc);
    if (rc != PM_OK)
        return cr_host_error(d.msg);
    s->cfg.topo = s->topo;
    s->cfg.pu = s->pus.pu;
    s->cfg.yield = s->pus.shared;
    s->cfg.cpu_time = s->pus.shared; /* shared PUs: count only the time a thread ran */
    return CLI_EXIT_OK;
}

/* A node slower than the watchdog would look like a stall: give the
 * watchdog ten times the slowest node unless the user set it. */
static void cr_watchdog_fit(cr_state *s)
{
    double slow = 0;
    if (!s->node_ns)
        return;
    for (uint32_t v = 0; v < s->g->nnodes; v++)
        slow = s->node_ns[v] > slow ? s->node_ns[v] : slow;
    double ms = 10.0 * slow / 1e6;
    if (!s->o.watchdog_set && ms > PM_RUNNER_WATCHDOG_MS)
        s->cfg.watchdog_ms = ms < 4e9 ? (uint32_t)ms : UINT32_MAX;
}

/* Without --ring, each ring holds the model's buffer depth plus one,
 * at least delay + PM_RUNNER_RING_SLACK and at most delay + 1024 (a depth
 * that keeps growing in the model means the parts run at different
 * rates; back-pressure then paces the producer).  A capacity line of the
 * map (`capacity FROM -> TO N`) gives its edge N slots instead (raised by
 * the runner to the least the edge needs). */
static void cr_ring_sizes(cr_state *s)
{
    if (s->o.ring_set || !s->cap)
        return;
    for (uint32_t e = 0; e < s->g->nedges; e++) {
        uint64_t d = (uint64_t)s->g->edges[e].delay, want = (uint64_t)s->depth[e] + 1u;
        uint64_t lo = d + PM_RUNNER_RING_SLACK, hi = d + 1024u;
        want = want < lo ? lo : want > hi ? hi : want;
        if (s->m->cap && s->m->cap[e]) /* the map's capacity line: that many slots */
            want = s->m->cap[e];
        s->cap[e] = want > UINT32_MAX ? UINT32_MAX : (uint32_t)want;
    }
    s->cfg.edge_capacity = s->cap;
}

/* Host cycles of node v: its time alone plus the runner's costs, in the
 * scenario's cycles at its clock (at least 0). */
static int64_t cr_host_cycles(const cr_state *s, double ns)
{
    double c = ns / s->cfg.ns_per_cycle;
    return c < 0.5 ? 0 : c > 1e15 ? (int64_t)1e15 : (int64_t)llround(c);
}

/* --host-map: map p->graph again with the nodes' host times and the
 * host's comm costs (a copy of the graph; the scenario is not changed),
 * keep the scenario's map's prediction for the comparison, run the new
 * map.  Needs identical cores: per-class cycles have no single host time. */
static int cr_host_map(cr_state *s, pm_diag *d)
{
    const pm_graph *g = s->g;
    if (g->platform.nclasses > 1) {
        pm_diag_set(d, g->file, 0, 0, "run --host-map needs identical cores; this scenario "
                    "declares %u core classes", g->platform.nclasses);
        return PM_EUNSUPPORTED;
    }
    int rc = pm_runner_predict_host(g, s->m, s->node_ns, &s->host, 0, &s->scn_map_predicted,
                                    NULL, d);
    pm_graph hg = *g;
    hg.nodes = malloc((g->nnodes ? g->nnodes : 1) * sizeof *hg.nodes);
    if (rc == PM_OK && !hg.nodes)
        rc = PM_ENOMEM;
    for (uint32_t v = 0; rc == PM_OK && v < g->nnodes; v++) {
        hg.nodes[v] = g->nodes[v];
        hg.nodes[v].cycles = cr_host_cycles(s, pm_runner_host_node_ns(g, &s->host, s->node_ns, v));
        hg.nodes[v].class_cycles = PM_NONE;
    }
    double lat, snd, rcv;
    pm_runner_host_comm(&s->host, &lat, &snd, &rcv);
    hg.platform.comm = (pm_comm){cr_host_cycles(s, lat), 0, cr_host_cycles(s, snd),
                                 cr_host_cycles(s, rcv)};
    hg.platform.interconnect = PM_P2P;
    pm_plan hp = s->scn;
    hp.graph = &hg;
    if (!hp.multirate)
        hp.source = &hg;
    pm_plan_opts po = {.refine = !s->o.no_refine};
    pm_map *hm = NULL;
    if (rc == PM_OK)
        rc = pm_plan_map(&hp, &po, NULL, &hm, d);
    free(hg.nodes);
    if (rc == PM_OK) {
        pm_map_destroy(s->m);
        s->m = hm;
    }
    return rc;
}

/* Calibrate the busy loop, time each node alone, measure the runner's own
 * costs on the first two PUs. */
static int cr_calibrate(cr_state *s)
{
    int rc = pm_runner_calibrate(&s->cfg.turns_per_ns);
    s->main_pinned = pm_topo_bind_thread(s->topo, s->pus.pu[0]) == PM_OK;
    s->node_ns = calloc(s->g->nnodes ? s->g->nnodes : 1, sizeof *s->node_ns);
    if (rc == PM_OK)
        rc = s->node_ns ? pm_runner_node_times(s->g, s->m, &s->cfg, CR_TIME_SAMPLES, s->node_ns) : PM_ENOMEM;
    if (rc == PM_OK)
        rc = pm_runner_host_costs(&s->cfg, s->pus.pu[0],
                                  s->m->ncores > 1 ? s->pus.pu[1] : PM_NONE, 2000, &s->host);
    s->handoff = s->host.latency_idle.median;
    s->handoff_p99 = s->host.latency_idle.p99;
    s->handoff_pinned = s->host.pinned || s->m->ncores < 2;
    return rc;
}

static int cr_measure(cr_state *s)
{
    pm_diag d;
    pm_diag_clear(&d);
    int rc = cr_calibrate(s);
    s->depth = calloc(s->g->nedges ? s->g->nedges : 1, sizeof *s->depth);
    s->cap = calloc(s->g->nedges ? s->g->nedges : 1, sizeof *s->cap);
    s->share = calloc(s->m->ncores, sizeof *s->share);
    if (rc == PM_OK && (!s->depth || !s->cap || !s->share))
        rc = PM_ENOMEM;
    if (rc == PM_OK && s->o.host_map)
        rc = cr_host_map(s, &d);
    if (rc == PM_OK)
        rc = pm_runner_predict_host(s->g, s->m, s->node_ns, &s->host,
                                    s->o.ring_set ? s->o.ring : 0, &s->predicted, s->depth, &d);
    cr_watchdog_fit(s);
    cr_ring_sizes(s);
    if (rc != PM_OK) {
        if (!d.msg[0])
            pm_diag_set(&d, s->g->file, 0, 0, "run: cannot measure or predict: %s",
                        pm_error_name(rc));
        cli_error(&d);
        return cli_exit_for(rc);
    }
    return CLI_EXIT_OK;
}

static const char *cr_edge_text(const pm_graph *g, uint32_t e, char *buf, size_t n)
{
    snprintf(buf, n, "%s -> %s", pm_graph_node_name(g, g->edges[e].src),
             pm_graph_node_name(g, g->edges[e].dst));
    return buf;
}

static void cr_report_stall(const cr_state *s)
{
    const pm_runner_result *r = &s->res;
    for (uint32_t c = 0; c < r->ncores; c++) {
        const pm_runner_wait *w = &r->waits[c];
        if (w->edge == PM_NONE)
            continue;
        char eb[600];
        const pm_edge *e = &s->g->edges[w->edge];
        pm_diag d;
        pm_diag_set(&d, s->g->file, e->line, e->col,
                    "run stopped, no progress: core %u (node %s, iteration %llu) waits for "
                    "%s on edge %s", c, pm_graph_node_name(s->g, w->node),
                    (unsigned long long)w->iteration, w->for_space ? "ring space" : "a token",
                    cr_edge_text(s->g, w->edge, eb, sizeof eb));
        cli_error(&d);
    }
}

static int cr_execute(cr_state *s)
{
    int rc = pm_runner_execute(s->g, s->m, &s->cfg, &s->res);
    if (rc == PM_EDEADLOCK) {
        cr_report_stall(s);
        return CLI_EXIT_INPUT;
    }
    pm_map *serial = NULL;
    pm_runner_result one = {0};
    if (rc == PM_OK)
        rc = pm_runner_serial_map(s->g, &serial);
    if (rc == PM_OK) {
        pm_runner_config c = s->cfg;
        c.pu = s->pus.pu; /* the single thread goes on the first PU */
        c.pace = NULL;    /* outputs do not depend on timing */
        rc = pm_runner_execute(s->g, serial, &c, &one);
    }
    if (rc == PM_OK && pm_runner_predict_host(s->g, s->m, s->res.node_ns, &s->host,
                                              s->o.ring_set ? s->o.ring : 0,
                                              &s->predicted_in_run, NULL, NULL) != PM_OK)
        s->predicted_in_run = 0;
    if (rc == PM_OK && s->paced.on)
        crp_predict(&s->paced, s->g, s->m, s->res.node_ns, s->handoff, s->cfg.ns_per_cycle);
    if (rc == PM_OK)
        pm_runner_breakdown(s->g, s->m, s->node_ns, &s->host, s->predicted, s->share);
    if (rc == PM_OK)
        s->outputs_match = one.output_hash == s->res.output_hash &&
                           s->res.order_errors == 0;
    pm_runner_result_free(&one);
    pm_map_destroy(serial);
    if (rc != PM_OK) {
        pm_diag d;
        if (rc == PM_ELIMIT)
            pm_diag_set(&d, s->g->file, 0, 0, "run: %u nodes x %u iterations (warm-up "
                        "included) exceed the %u timestamps kept, or a ring is too large; "
                        "use a smaller -n or --ring", s->g->nnodes,
                        s->cfg.iterations + s->cfg.warmup, PM_RUNNER_MAX_RECORDS);
        else
            pm_diag_set(&d, s->g->file, 0, 0, "run failed: %s", pm_error_name(rc));
        cli_error(&d);
        return cli_exit_for(rc);
    }
    return CLI_EXIT_OK;
}

static const char *cr_work_text(const pm_node *n, char *buf, size_t len)
{
    static const char *const names[] = {"spin", "fir", "biquad", "fft"};
    if (n->work == PM_WORK_SPIN)
        snprintf(buf, len, "spin");
    else
        snprintf(buf, len, "%s:%u", names[n->work], n->work_param);
    return buf;
}

static bool cr_all_pinned(const cr_state *s)
{
    for (uint32_t c = 0; c < s->res.ncores; c++)
        if (!s->res.pinned[c])
            return false;
    return s->main_pinned && (s->m->ncores < 2 || s->handoff_pinned);
}

/* A time given in ns, in the report's one unit style ("2.235 us"); what
 * rounding left below zero, or not finite, is written as 0. */
static const char *cr_time(char buf[PM_UNITS_LEN], double ns)
{
    return pm_units_time(buf, PM_UNITS_LEN, isfinite(ns) && ns > 0 ? ns * 1e-9 : 0.0);
}

static void cr_text_setup(const cr_state *s)
{
    const pm_platform *p = &s->g->platform;
    printf("run %s%s%s%s\n", s->o.file, p->title ? " \"" : "", p->title ? p->title : "",
           p->title ? "\"" : "");
    printf("map: %u core%s, %s\n", s->m->ncores, s->m->ncores == 1 ? "" : "s",
           s->o.host_map ? "mapped again with this host's costs (--host-map)"
           : !s->scheduled_map ? s->o.map
           : s->po.mapper == PM_PLAN_MAPPER_LIST ? "from the list scheduler"
                                                 : "from the period-first mapper");
    printf("processing units: %s\n", s->pus.summary);
    for (uint32_t c = 0; c < s->pus.n; c++)
        printf("  core %u: processing unit %u %s\n", c, s->pus.pu[c], s->pus.why[c]);
    char cyc[PM_UNITS_LEN];
    printf("spin calibration: %.3f busy-loop turns per ns; 1 node cycle = %s",
           s->cfg.turns_per_ns, cr_time(cyc, s->cfg.ns_per_cycle));
    if (p->clock_hz && !s->o.nspc) {
        char clk[PM_UNITS_LEN];
        printf(" (clock %s)", pm_units_freq(clk, sizeof clk, p->clock_hz));
    }
    printf("\n");
}

/* A cost as time and as cycles at the scenario's clock: "123 ns  49.2 cyc". */
static void cr_cost(const cr_state *s, const char *what, pm_host_stat st)
{
    char med[PM_UNITS_LEN], p99[PM_UNITS_LEN];
    printf("  %-36s %10s %8.1f cyc   p99 %10s %8.1f cyc\n", what, cr_time(med, st.median),
           st.median / s->cfg.ns_per_cycle, cr_time(p99, st.p99), st.p99 / s->cfg.ns_per_cycle);
}

static void cr_text_host(const cr_state *s)
{
    const pm_host_costs *h = &s->host;
    char t[PM_UNITS_LEN];
    printf("\nhost costs of the runner (median and p99; cycles at %s per cycle)\n",
           cr_time(t, s->cfg.ns_per_cycle));
    cr_cost(s, "dispatch per firing", h->dispatch);
    printf("  %-36s %10s %8.1f cyc\n", "source signal + sink hash, per iter.",
           cr_time(t, h->ends_ns), h->ends_ns / s->cfg.ns_per_cycle);
    if (h->nsizes == 0)
        return;
    cr_cost(s, "handoff latency, both cores idle", h->latency_idle);
    cr_cost(s, "handoff latency, both cores busy", h->latency_busy);
    cr_cost(s, "crossing of the runner's own loop", h->crossing);
    for (uint32_t i = 0; i < h->nsizes; i++) {
        char what[64];
        snprintf(what, sizeof what, "send per token of %u words%s", h->words[i],
                 i == h->run_size ? " (run)" : "");
        cr_cost(s, what, h->send[i]);
        snprintf(what, sizeof what, "recv per token of %u words%s", h->words[i],
                 i == h->run_size ? " (run)" : "");
        cr_cost(s, what, h->recv[i]);
    }
    double lat, snd, rcv, npc = s->cfg.ns_per_cycle;
    pm_runner_host_comm(h, &lat, &snd, &rcv);
    printf("this host as a comm line (send/recv at 0 words; per word: send %.2f + recv %.2f "
           "cycles):\n", h->send_per_word / npc, h->recv_per_word / npc);
    printf("  comm latency=%.0f per-word=%.0f send=%.0f recv=%.0f\n", lat / npc,
           (h->send_per_word + h->recv_per_word) / npc, h->send_base / npc, h->recv_base / npc);
}

static void cr_text_nodes(const cr_state *s)
{
    printf("\n%-20s %4s  %-10s %9s %10s %10s %11s\n", "node", "core", "work", "cycles",
           "alone", "in run", "host cycles");
    for (uint32_t c = 0; c < s->m->ncores; c++)
        for (uint32_t i = s->m->off[c]; i < s->m->off[c + 1]; i++) {
            uint32_t v = s->m->order[i];
            char wb[32], alone[PM_UNITS_LEN], run[PM_UNITS_LEN];
            uint32_t cls = s->g->platform.core_class[c];
            double host = pm_runner_host_node_ns(s->g, &s->host, s->node_ns, v);
            printf("%-20.20s %4u  %-10s %9lld %10s %10s %11.0f\n",
                   pm_graph_node_name(s->g, v), c, cr_work_text(&s->g->nodes[v], wb, sizeof wb),
                   (long long)pm_graph_cycles_on(s->g, v, cls), cr_time(alone, s->node_ns[v]),
                   cr_time(run, s->res.node_ns[v]), host / s->cfg.ns_per_cycle);
        }
    printf("(alone: kernel on one PU, the least of %u round medians of %u timed samples;\n"
           " in run: kernel, median; host cycles: alone + dispatch (+ source/sink share),\n"
           " what the model uses)\n", PM_RUNNER_TIME_ROUNDS, CR_TIME_SAMPLES);
}

/* The host cycles as scenario lines to paste (single-rate scenarios). */
static void cr_text_paste(const cr_state *s)
{
    if (s->scn.multirate || s->g->platform.nclasses > 1) {
        printf("\n(no node lines to paste: the scenario is multirate or has core classes)\n");
        return;
    }
    printf("\nnode lines with this host's cycles (paste into a scenario):\n");
    for (uint32_t v = 0; v < s->g->nnodes; v++) {
        char wb[32];
        const pm_node *n = &s->g->nodes[v];
        double host = pm_runner_host_node_ns(s->g, &s->host, s->node_ns, v);
        printf("  node %s cycles=%.0f%s%s\n", pm_graph_node_name(s->g, v),
               host / s->cfg.ns_per_cycle, n->work == PM_WORK_SPIN ? "" : " work=",
               n->work == PM_WORK_SPIN ? "" : cr_work_text(n, wb, sizeof wb));
    }
}

static void cr_text_breakdown(const cr_state *s)
{
    const pm_runner_result *r = &s->res;
    printf("\nwhere the period goes, per iteration (model: host costs; run: measured)\n");
    printf("%-6s %10s %10s %10s %10s   %10s %10s %10s\n", "core", "work", "dispatch",
           "transfers", "waiting", "run work", "run wait", "run other");
    for (uint32_t c = 0; c < s->m->ncores; c++) {
        const pm_runner_share *m = &s->share[c];
        double per = r->period_ns_mean;
        char t[7][PM_UNITS_LEN];
        printf("%-6u %10s %10s %10s %10s   %10s %10s %10s\n", c, cr_time(t[0], m->work),
               cr_time(t[1], m->dispatch), cr_time(t[2], m->transfers),
               cr_time(t[3], m->waiting), cr_time(t[4], r->busy[c] * per),
               cr_time(t[5], r->wait[c] * per),
               cr_time(t[6], (1.0 - r->busy[c] - r->wait[c]) * per));
    }
    printf("(run other: dispatch and ring operations; run columns are shares of the mean "
           "period)\n\n");
}

/* Print text in lines of at most `width` columns, breaking at spaces. */
static void cr_print_wrapped(const char *text, size_t width)
{
    while (*text) {
        size_t len = strlen(text), cut = len;
        if (len > width) {
            cut = width;
            while (cut > 0 && text[cut] != ' ')
                cut--;
            if (cut == 0)
                cut = width;
        }
        printf("%.*s\n", (int)cut, text);
        text += cut;
        while (*text == ' ')
            text++;
    }
}

static void cr_text_results(const cr_state *s)
{
    const pm_runner_result *r = &s->res;
    char a[PM_UNITS_LEN], b[PM_UNITS_LEN], m[PM_UNITS_LEN];
    if (s->o.host_map)
        printf("scenario's map     %12s  predicted with the host's costs\n",
               cr_time(a, s->scn_map_predicted));
    printf("predicted period   %12s  (simulator: times alone + the runner's host costs)\n",
           cr_time(a, s->predicted));
    printf("measured period    %12s  median; p99 %s, mean %s\n", cr_time(a, r->period_ns_median),
           cr_time(b, r->period_ns_p99), cr_time(m, r->period_ns_mean));
    printf("measured/predicted %12.3f\n", s->predicted > 0 ? r->period_ns_median / s->predicted
                                                         : 0.0);
    printf("model, in-run times%12s  (the prediction again, kernel times of this run)\n",
           cr_time(a, s->predicted_in_run));
    printf("latency            %12s  median; p99 %s (first source start to last sink end)\n",
           cr_time(a, r->latency_ns_median), cr_time(b, r->latency_ns_p99));
    printf("iterations         %12u  after %u warm-up\n", r->iterations, r->warmup);
    printf("busy share (kernels)");
    for (uint32_t c = 0; c < r->ncores; c++)
        printf("%s core %u %.1f%%", c ? "," : "", c, 100.0 * r->busy[c]);
    printf("\noutputs            %s\n", s->outputs_match
               ? "bit-identical to a single-threaded run; every token once, in order"
               : "DIFFER from a single-threaded run or arrived out of order");
    if (s->pus.shared)
        printf("oversubscribed     threads share PUs; the prediction assumes one PU per core\n");
    printf("pinning            %s\n", cr_all_pinned(s)
               ? "every thread pinned to its PU"
               : "NOT pinned (the system refused; times may include migrations)");
    crp_text(&s->paced, r, s->cfg.ns_per_cycle);
    printf("\n");
    if (cli_quiet)
        cli_print_caution(100);
    else
        cr_print_wrapped(cli_caution, 100);
}

static void cr_json_cores(pm_json *j, const cr_state *s)
{
    pm_json_key(j, "cores");
    pm_json_array_begin(j);
    for (uint32_t c = 0; c < s->m->ncores; c++) {
        pm_json_object_begin(j);
        pm_json_key(j, "core"); pm_json_uint(j, c);
        pm_json_key(j, "pu"); pm_json_uint(j, s->pus.pu[c]);
        pm_json_key(j, "why"); pm_json_string(j, s->pus.why[c]);
        pm_json_key(j, "busy"); pm_json_double(j, s->res.busy[c]);
        pm_json_key(j, "wait"); pm_json_double(j, s->res.wait[c]);
        const pm_runner_share *m = &s->share[c];
        pm_json_key(j, "model_ns");
        pm_json_object_begin(j);
        pm_json_key(j, "work"); pm_json_double(j, m->work);
        pm_json_key(j, "dispatch"); pm_json_double(j, m->dispatch);
        pm_json_key(j, "transfers"); pm_json_double(j, m->transfers);
        pm_json_key(j, "waiting"); pm_json_double(j, m->waiting);
        pm_json_object_end(j);
        pm_json_key(j, "pinned"); pm_json_bool(j, s->res.pinned[c]);
        pm_json_object_end(j);
    }
    pm_json_array_end(j);
    pm_json_key(j, "nodes");
    pm_json_array_begin(j);
    for (uint32_t v = 0; v < s->g->nnodes; v++) {
        char wb[32];
        pm_json_object_begin(j);
        pm_json_key(j, "name"); pm_json_string(j, pm_graph_node_name(s->g, v));
        pm_json_key(j, "core"); pm_json_uint(j, s->m->core_of[v]);
        pm_json_key(j, "work"); pm_json_string(j, cr_work_text(&s->g->nodes[v], wb, sizeof wb));
        pm_json_key(j, "host_ns"); pm_json_double(j, s->node_ns[v]);
        pm_json_key(j, "run_ns"); pm_json_double(j, s->res.node_ns[v]);
        pm_json_key(j, "host_cycles");
        pm_json_double(j, pm_runner_host_node_ns(s->g, &s->host, s->node_ns, v) /
                              s->cfg.ns_per_cycle);
        pm_json_object_end(j);
    }
    pm_json_array_end(j);
}

static void cr_json_stat(pm_json *j, const char *key, pm_host_stat st)
{
    pm_json_key(j, key);
    pm_json_object_begin(j);
    pm_json_key(j, "median"); pm_json_double(j, st.median);
    pm_json_key(j, "p99"); pm_json_double(j, st.p99);
    pm_json_object_end(j);
}

/* The runner's host costs in ns, and the comm line in the scenario's cycles. */
static void cr_json_host(pm_json *j, const cr_state *s)
{
    const pm_host_costs *h = &s->host;
    double lat, snd, rcv, npc = s->cfg.ns_per_cycle;
    pm_runner_host_comm(h, &lat, &snd, &rcv);
    pm_json_key(j, "host_costs");
    pm_json_object_begin(j);
    cr_json_stat(j, "dispatch_ns", h->dispatch);
    pm_json_key(j, "ends_ns"); pm_json_double(j, h->ends_ns);
    if (h->nsizes) {
        cr_json_stat(j, "latency_idle_ns", h->latency_idle);
        cr_json_stat(j, "latency_busy_ns", h->latency_busy);
        cr_json_stat(j, "crossing_ns", h->crossing);
        pm_json_key(j, "sizes");
        pm_json_array_begin(j);
        for (uint32_t i = 0; i < h->nsizes; i++) {
            pm_json_object_begin(j);
            pm_json_key(j, "words"); pm_json_uint(j, h->words[i]);
            cr_json_stat(j, "send_ns", h->send[i]);
            cr_json_stat(j, "recv_ns", h->recv[i]);
            pm_json_object_end(j);
        }
        pm_json_array_end(j);
        pm_json_key(j, "comm_cycles");
        pm_json_object_begin(j);
        pm_json_key(j, "latency"); pm_json_double(j, lat / npc);
        pm_json_key(j, "per_word");
        pm_json_double(j, (h->send_per_word + h->recv_per_word) / npc);
        pm_json_key(j, "send"); pm_json_double(j, h->send_base / npc);
        pm_json_key(j, "recv"); pm_json_double(j, h->recv_base / npc);
        pm_json_object_end(j);
    }
    pm_json_object_end(j);
}

static void cr_json(const cr_state *s)
{
    const pm_runner_result *r = &s->res;
    pm_json j;
    pm_json_init(&j, stdout, 2);
    pm_json_object_begin(&j);
    pm_json_key(&j, "period_ns"); pm_json_double(&j, r->period_ns_median);
    pm_json_key(&j, "period_ns_p99"); pm_json_double(&j, r->period_ns_p99);
    pm_json_key(&j, "predicted_ns"); pm_json_double(&j, s->predicted);
    pm_json_key(&j, "ratio");
    pm_json_double(&j, s->predicted > 0 ? r->period_ns_median / s->predicted : 0.0);
    pm_json_key(&j, "predicted_in_run_ns"); pm_json_double(&j, s->predicted_in_run);
    pm_json_key(&j, "period_ns_mean"); pm_json_double(&j, r->period_ns_mean);
    pm_json_key(&j, "latency_ns"); pm_json_double(&j, r->latency_ns_median);
    pm_json_key(&j, "latency_ns_p99"); pm_json_double(&j, r->latency_ns_p99);
    pm_json_key(&j, "handoff_ns"); pm_json_double(&j, s->handoff);
    pm_json_key(&j, "handoff_ns_p99"); pm_json_double(&j, s->handoff_p99);
    pm_json_key(&j, "ns_per_cycle"); pm_json_double(&j, s->cfg.ns_per_cycle);
    pm_json_key(&j, "spin_turns_per_ns"); pm_json_double(&j, s->cfg.turns_per_ns);
    pm_json_key(&j, "iterations"); pm_json_uint(&j, r->iterations);
    pm_json_key(&j, "warmup"); pm_json_uint(&j, r->warmup);
    pm_json_key(&j, "block"); pm_json_uint(&j, s->cfg.block);
    pm_json_key(&j, "pinned"); pm_json_bool(&j, cr_all_pinned(s));
    pm_json_key(&j, "oversubscribed"); pm_json_bool(&j, s->pus.shared);
    pm_json_key(&j, "outputs_match"); pm_json_bool(&j, s->outputs_match);
    pm_json_key(&j, "order_errors"); pm_json_uint(&j, r->order_errors);
    pm_json_key(&j, "host_map"); pm_json_bool(&j, s->o.host_map);
    if (s->o.host_map) {
        pm_json_key(&j, "scenario_map_predicted_ns"); pm_json_double(&j, s->scn_map_predicted);
    }
    cr_json_host(&j, s);
    cr_json_cores(&j, s);
    crp_json(&s->paced, r, &j);
    cli_json_caution(&j);
    pm_json_object_end(&j);
    pm_json_finish(&j);
}

static void cr_free(cr_state *s)
{
    pm_runner_result_free(&s->res);
    crp_free(&s->paced);
    free(s->node_ns);
    free(s->depth);
    free(s->cap);
    free(s->share);
    pm_topo_choice_free(&s->pus);
    pm_topo_destroy(s->topo);
    pm_map_destroy(s->m);
    pm_plan_free(&s->scn);
}

static int cr_steps(cr_state *s)
{
    int st = cli_load_scenario(s->o.file, s->o.procs_set, s->o.procs, &s->scn);
    if (st != CLI_EXIT_OK)
        return st;
    s->g = s->scn.graph;
    if ((st = cr_config(s)) != CLI_EXIT_OK || (st = cr_make_map(s)) != CLI_EXIT_OK ||
        (st = cr_choose_pus(s)) != CLI_EXIT_OK || (st = cr_measure(s)) != CLI_EXIT_OK ||
        (st = cr_execute(s)) != CLI_EXIT_OK)
        return st;
    if (!cr_all_pinned(s))
        cli_warning("run: the system refused to pin threads (restricted cpuset or "
                    "container?); ran unpinned, so times may include migrations: run where "
                    "thread affinity is allowed, or pick allowed units with --cores");
    if (s->o.json) {
        cr_json(s);
    } else {
        cr_text_setup(s);
        cr_text_host(s);
        cr_text_nodes(s);
        cr_text_paste(s);
        cr_text_breakdown(s);
        cr_text_results(s);
    }
    return s->outputs_match ? CLI_EXIT_OK : CLI_EXIT_INPUT;
}

int pm_cmd_run(int argc, char **argv)
{
    cr_state s;
    memset(&s, 0, sizeof s);
    int st = cr_parse(&s.o, argc, argv);
    if (st >= 0)
        return st;
    if (cli_mapper_choice("run", s.o.mapper, s.o.no_refine, &s.po) != CLI_EXIT_OK)
        return CLI_EXIT_USAGE;
    st = cr_steps(&s);
    cr_free(&s);
    return st;
}
