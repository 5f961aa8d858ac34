/*
 * cmd_schedule.c - `pacemap schedule FILE [-p N] [--map F] [--emit-map F]
 * [--svg F] [--json] [--loop-blind] [--refine] [--pipelined]`:
 * list-schedule one iteration (or time a hand map), print the per-core
 * table, makespan, utilisation, cross-core transfers, the loop-time floor
 * and a text Gantt chart; with --pipelined (or for a hand map with lags)
 * the period-first mapper's map with its lags and exact period; write the
 * map and an SVG chart through pm_outfile.  Scheduling itself lives in
 * sched/, mapping in sim/search/.
 */
#include "cli.h"
#include "pacemap/units.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "pacemap/gantt.h"
#include "pacemap/json.h"
#include "pacemap/map.h"
#include "pacemap/outfile.h"
#include "pacemap/sched.h"

typedef struct sc_args {
    uint32_t procs;
    bool procs_set, json, loop_blind, refine, pipelined;
    const char *emit_map, *svg, *map;
} sc_args;

typedef struct sc_result {
    const pm_graph *g;
    pm_schedule *s;
    pm_map *m;
    pm_rat floor;
    uint32_t *loop, nloop;
    const char *file;
    const pm_plan *scn;
    pm_map *pm;          /* the pipelined map (--pipelined, or a hand map with
                            lags: then the same as m); NULL when not shown */
    pm_map *pm_nodes;    /* pm in the scenario's own nodes (multirate) or NULL */
    pm_plan_timing pt;   /* pm's period */
} sc_result;

#define SC_NAME_W 24

/* ---- Gantt chart from a schedule ---------------------------------------- */

typedef struct sc_chart {
    pm_gantt chart;
    char **names;
    pm_gantt_box *boxes;
    pm_gantt_arrow *arrows;
} sc_chart;

static void sc_chart_free(sc_chart *c, uint32_t ncores)
{
    for (uint32_t i = 0; c->names && i < ncores; i++)
        free(c->names[i]);
    free(c->names);
    free(c->boxes);
    free(c->arrows);
}

static int sc_chart_make(const sc_result *r, sc_chart *c)
{
    const pm_schedule *s = r->s;
    memset(c, 0, sizeof *c);
    c->names = calloc((size_t)s->ncores + 1, sizeof *c->names);
    c->boxes = calloc((size_t)s->nnodes + 1, sizeof *c->boxes);
    c->arrows = calloc(s->ntransfers + 1, sizeof *c->arrows);
    if (!c->names || !c->boxes || !c->arrows)
        return PM_ENOMEM;
    for (uint32_t i = 0; i < s->ncores; i++) {
        c->names[i] = malloc(24);
        if (!c->names[i])
            return PM_ENOMEM;
        snprintf(c->names[i], 24, "core %u", i);
    }
    for (uint32_t v = 0; v < s->nnodes; v++)
        c->boxes[v] = (pm_gantt_box){s->slots[v].core, s->slots[v].start, s->slots[v].end,
                                     pm_graph_node_name(r->g, v), 0};
    for (size_t i = 0; i < s->ntransfers; i++) {
        const pm_transfer *t = &s->transfers[i];
        c->arrows[i] = (pm_gantt_arrow){t->from_core, t->to_core, t->send_start, t->recv_end,
                                        pm_graph_node_name(r->g, t->dst)};
    }
    c->chart = (pm_gantt){r->g->platform.title ? r->g->platform.title : r->file, s->ncores,
                          (const char *const *)c->names, c->boxes, s->nnodes, c->arrows,
                          s->ntransfers, r->g->platform.clock_hz, cli_caution};
    return PM_OK;
}

/* ---- output files ------------------------------------------------------- */

static int sc_write_map(const void *ctx, FILE *f)
{
    const sc_result *r = ctx;
    return pm_plan_map_write(r->scn, r->pm ? r->pm : r->m, f);
}

static int sc_write_svg(const void *ctx, FILE *f)
{
    const sc_result *r = ctx;
    sc_chart c;
    int rc = sc_chart_make(r, &c);
    if (rc == PM_OK)
        rc = pm_gantt_write_svg(&c.chart, f);
    sc_chart_free(&c, r->s->ncores);
    return rc;
}

/* ---- human text --------------------------------------------------------- */

static void sc_text_summary(const sc_result *r)
{
    const pm_platform *p = &r->g->platform;
    printf("%s: %u nodes on %u cores, %s\n", r->file, r->g->nnodes, p->ncores,
           p->interconnect == PM_BUS ? "bus" : "point-to-point links");
    printf("makespan       %lld cycles", (long long)r->s->makespan);
    if (p->clock_hz) {
        char t[PM_UNITS_LEN], clk[PM_UNITS_LEN];
        printf(" (%s at %s)", pm_units_cycles(t, sizeof t, (double)r->s->makespan, p->clock_hz),
               pm_units_freq(clk, sizeof clk, p->clock_hz));
    }
    putchar('\n');
    if (r->nloop > 0) {
        printf("loop floor     %.6g cycles per iteration (%lld/%lld): loop", 
               pm_rat_to_double(r->floor), (long long)r->floor.num, (long long)r->floor.den);
        for (uint32_t i = 0; i < r->nloop && i < 6; i++)
            printf(" %.*s", SC_NAME_W, pm_graph_node_name(r->g, r->loop[i]));
        printf("%s\n", r->nloop > 6 ? " ..." : "");
    }
}

static void sc_text_slots(const sc_result *r)
{
    printf("\n%-5s %-*s %12s %12s\n", "core", SC_NAME_W, "node", "start", "end");
    for (uint32_t c = 0; c < r->m->ncores; c++)
        for (uint32_t i = r->m->off[c]; i < r->m->off[c + 1]; i++) {
            uint32_t v = r->m->order[i];
            printf("%-5u %-*.*s %12lld %12lld\n", c, SC_NAME_W, SC_NAME_W,
                   pm_graph_node_name(r->g, v), (long long)r->s->slots[v].start,
                   (long long)r->s->slots[v].end);
        }
    printf("\n%-5s %12s %12s\n", "core", "busy", "utilisation");
    for (uint32_t c = 0; c < r->s->ncores; c++)
        printf("%-5u %12lld %11.1f%%\n", c, (long long)r->s->busy[c],
               r->s->makespan ? 100.0 * (double)r->s->busy[c] / (double)r->s->makespan : 0.0);
}

static void sc_text_transfers(const sc_result *r)
{
    if (r->s->ntransfers == 0) {
        printf("\nno cross-core transfers\n");
        return;
    }
    printf("\n%-20s %-20s %5s %10s %10s %8s\n", "cross-core from", "to", "cores", "leaves",
           "ready", "cost");
    for (size_t i = 0; i < r->s->ntransfers; i++) {
        const pm_transfer *t = &r->s->transfers[i];
        char cores[24];
        snprintf(cores, sizeof cores, "%u>%u", t->from_core, t->to_core);
        printf("%-20.20s %-20.20s %5s %10lld %10lld %8lld\n", pm_graph_node_name(r->g, t->src),
               pm_graph_node_name(r->g, t->dst), cores, (long long)t->send_start,
               (long long)t->recv_end, (long long)t->cost);
    }
}

static uint32_t sc_max_lag(const pm_map *m)
{
    uint32_t most = 0;
    for (uint32_t v = 0; v < m->nnodes; v++)
        most = m->lag[v] > most ? m->lag[v] : most;
    return most;
}

/* The pipelined map as NODE@LAG lists per core, in the scenario's nodes. */
static void sc_text_pipelined_map(const sc_result *r)
{
    const pm_map *m = r->pm_nodes ? r->pm_nodes : r->pm;
    const pm_graph *g = r->pm_nodes ? r->scn->source : r->g;
    printf("%-5s nodes in order (NAME@LAG: runs LAG rounds after round 0)\n", "core");
    for (uint32_t c = 0; c < m->ncores; c++) {
        int col = printf("%-5u", c);
        for (uint32_t i = m->off[c]; i < m->off[c + 1]; i++) {
            uint32_t v = m->order[i];
            char item[SC_NAME_W + 16];
            int len = m->lag[v] ? snprintf(item, sizeof item, "%.*s@%u", SC_NAME_W,
                                           pm_graph_node_name(g, v), m->lag[v])
                                : snprintf(item, sizeof item, "%.*s", SC_NAME_W,
                                           pm_graph_node_name(g, v));
            if (col + 1 + len > 100)
                col = printf("\n%-5s", "") - 1;
            col += printf(" %s", item);
        }
        putchar('\n');
    }
}

static void sc_text_pipelined(const sc_result *r, bool hand)
{
    printf("\npipelined map%s: %u cores, lags up to %u\n",
           hand ? "" : " (period-first mapper)", r->pm->ncores, sc_max_lag(r->pm));
    printf("period         %.6g cycles per iteration (%lld/%lld)\n               %s\n",
           pm_rat_to_double(r->pt.period), (long long)r->pt.period.num,
           (long long)r->pt.period.den,
           !r->pt.simulated ? "exact (IPC cycle ratio, lags included)"
           : r->pt.exact    ? "simulated on the bus, periodic regime reached"
                            : "simulated average: no periodic regime, not exact");
    sc_text_pipelined_map(r);
}

static int sc_text(const sc_result *r)
{
    if (r->pm == r->m) { /* a hand map with lags: one iteration spans rounds */
        printf("%s: %u nodes on %u cores; the map has lags, so one iteration is not "
               "timed alone\n", r->file, r->g->nnodes, r->g->platform.ncores);
        sc_text_pipelined(r, true);
        return PM_OK;
    }
    sc_text_summary(r);
    sc_text_slots(r);
    sc_text_transfers(r);
    putchar('\n');
    if (cli_quiet) /* the chart illustrates the slots above */
        return PM_OK;
    sc_chart c;
    int rc = sc_chart_make(r, &c);
    if (rc == PM_OK) {
        c.chart.title = NULL;
        c.chart.caution = NULL; /* printed once, at the end */
        rc = pm_gantt_write_text(&c.chart, stdout, 100);
    }
    sc_chart_free(&c, r->s->ncores);
    if (rc == PM_OK && r->pm)
        sc_text_pipelined(r, false);
    return rc;
}

/* ---- JSON --------------------------------------------------------------- */

static void sc_json_map(pm_json *j, const sc_result *r, const pm_json_names *nm)
{
    pm_json_key(j, "map");
    pm_json_array_begin(j);
    for (uint32_t c = 0; c < r->m->ncores; c++) {
        pm_json_array_begin(j);
        for (uint32_t i = r->m->off[c]; i < r->m->off[c + 1]; i++)
            pm_json_name(j, nm, r->m->order[i]);
        pm_json_array_end(j);
    }
    pm_json_array_end(j);
    pm_json_key(j, "slots");
    pm_json_array_begin(j);
    for (uint32_t v = 0; v < r->s->nnodes; v++) {
        pm_json_object_begin(j);
        pm_json_key(j, "node");
        pm_json_name(j, nm, v);
        pm_json_key(j, "core");
        pm_json_uint(j, r->s->slots[v].core);
        pm_json_key(j, "start");
        pm_json_int(j, r->s->slots[v].start);
        pm_json_key(j, "end");
        pm_json_int(j, r->s->slots[v].end);
        pm_json_object_end(j);
    }
    pm_json_array_end(j);
}

static void sc_json_transfer(pm_json *j, const pm_json_names *nm, const pm_transfer *t)
{
    pm_json_object_begin(j);
    pm_json_key(j, "from");
    pm_json_name(j, nm, t->src);
    pm_json_key(j, "to");
    pm_json_name(j, nm, t->dst);
    pm_json_key(j, "from_core");
    pm_json_uint(j, t->from_core);
    pm_json_key(j, "to_core");
    pm_json_uint(j, t->to_core);
    pm_json_key(j, "send_start");
    pm_json_int(j, t->send_start);
    pm_json_key(j, "wire_start");
    pm_json_int(j, t->wire_start);
    pm_json_key(j, "arrival");
    pm_json_int(j, t->arrival);
    pm_json_key(j, "ready");
    pm_json_int(j, t->recv_end);
    pm_json_key(j, "cost");
    pm_json_int(j, t->cost);
    pm_json_object_end(j);
}

static void sc_json_extras(pm_json *j, const sc_result *r, const pm_json_names *nm)
{
    pm_json_key(j, "utilisation");
    pm_json_array_begin(j);
    for (uint32_t c = 0; c < r->s->ncores; c++)
        pm_json_double(j, r->s->makespan ? (double)r->s->busy[c] / (double)r->s->makespan : 0);
    pm_json_array_end(j);
    pm_json_key(j, "busy");
    pm_json_array_begin(j);
    for (uint32_t c = 0; c < r->s->ncores; c++)
        pm_json_int(j, r->s->busy[c]);
    pm_json_array_end(j);
    pm_json_key(j, "transfers");
    pm_json_array_begin(j);
    for (size_t i = 0; i < r->s->ntransfers; i++)
        sc_json_transfer(j, nm, &r->s->transfers[i]);
    pm_json_array_end(j);
    pm_json_key(j, "loop_floor");
    if (r->nloop > 0)
        pm_json_rat(j, r->floor);
    else
        pm_json_null(j);
    pm_json_key(j, "loop_floor_nodes");
    pm_json_array_begin(j);
    for (uint32_t i = 0; i < r->nloop; i++)
        pm_json_name(j, nm, r->loop[i]);
    pm_json_array_end(j);
}

static void sc_json_pipelined(pm_json *j, const sc_result *r)
{
    const pm_map *m = r->pm_nodes ? r->pm_nodes : r->pm;
    const pm_graph *g = r->pm_nodes ? r->scn->source : r->g;
    pm_json_key(j, "pipelined");
    pm_json_object_begin(j);
    pm_json_key(j, "period");
    pm_json_rat(j, r->pt.period);
    pm_json_key(j, "period_exact");
    pm_json_bool(j, r->pt.exact);
    pm_json_key(j, "period_simulated");
    pm_json_bool(j, r->pt.simulated);
    pm_json_key(j, "map");
    pm_json_array_begin(j);
    for (uint32_t c = 0; c < m->ncores; c++) {
        pm_json_array_begin(j);
        for (uint32_t i = m->off[c]; i < m->off[c + 1]; i++) {
            pm_json_object_begin(j);
            pm_json_key(j, "node");
            pm_json_string(j, pm_graph_node_name(g, m->order[i]));
            pm_json_key(j, "lag");
            pm_json_uint(j, m->lag[m->order[i]]);
            pm_json_object_end(j);
        }
        pm_json_array_end(j);
    }
    pm_json_array_end(j);
    pm_json_object_end(j);
}

/* A hand map with lags: no one-iteration timing, the pipelined view only. */
static void sc_json_lagged(pm_json *j, const sc_result *r)
{
    pm_json_key(j, "procs");
    pm_json_uint(j, r->m->ncores);
    pm_json_key(j, "makespan");
    pm_json_null(j);
    pm_json_key(j, "map");
    pm_json_array_begin(j);
    pm_json_array_end(j);
    pm_json_key(j, "slots");
    pm_json_array_begin(j);
    pm_json_array_end(j);
    pm_json_key(j, "source");
    pm_json_string(j, "map");
    sc_json_pipelined(j, r);
}

static int sc_json(const sc_result *r, bool from_map)
{
    pm_json j;
    pm_json_names nm;
    if (pm_json_names_init(&nm, r->g) != PM_OK)
        return PM_ENOMEM;
    pm_json_init(&j, stdout, 2);
    pm_json_object_begin(&j);
    if (r->pm == r->m) {
        sc_json_lagged(&j, r);
        pm_json_key(&j, "caution");
        pm_json_string(&j, cli_caution);
        pm_json_object_end(&j);
        pm_json_finish(&j);
        pm_json_names_free(&nm);
        return PM_OK;
    }
    pm_json_key(&j, "procs");
    pm_json_uint(&j, r->s->ncores);
    pm_json_key(&j, "makespan");
    pm_json_int(&j, r->s->makespan);
    sc_json_map(&j, r, &nm);
    pm_json_key(&j, "source");
    pm_json_string(&j, from_map ? "map" : "list");
    sc_json_extras(&j, r, &nm);
    if (r->pm)
        sc_json_pipelined(&j, r);
    pm_json_key(&j, "caution");
    pm_json_string(&j, cli_caution);
    pm_json_object_end(&j);
    pm_json_finish(&j);
    pm_json_names_free(&nm);
    return PM_OK;
}

/* The caution in lines of at most 96 columns. */
/* ---- the command -------------------------------------------------------- */

/* The pipelined map's period and its scenario-node form. */
static int sc_pipelined(sc_result *r, pm_diag *d)
{
    int rc = pm_plan_period(r->scn, r->pm, &r->pt, d);
    if (rc == PM_OK && r->scn->multirate)
        rc = pm_map_collapse(r->scn->source, r->scn->rep, r->pm, &r->pm_nodes, d);
    return rc;
}

/* The map: the hand map (timed for one iteration unless it has lags) or
 * the list scheduler's; then the pipelined map when asked. */
static int sc_maps(const sc_args *a, sc_result *r, pm_diag *d)
{
    pm_sched_opts so = {.loop_blind = a->loop_blind};
    pm_plan_opts o = {.sched = &so, .refine = a->refine, .mapper = PM_PLAN_MAPPER_LIST};
    pm_plan_opts period = {.mapper = PM_PLAN_MAPPER_PERIOD};
    int rc;
    if (a->map) {
        if (cli_read_map(r->scn, a->map, &r->m) != CLI_EXIT_OK)
            return PM_EMAP; /* already reported */
        if (pm_map_has_lags(r->m)) {
            r->pm = r->m;
            return sc_pipelined(r, d);
        }
        rc = pm_sched_from_map(r->g, r->m, &r->s, d);
    } else {
        rc = pm_plan_map(r->scn, &o, &r->s, &r->m, d);
    }
    if (rc == PM_OK && a->pipelined && !a->map)
        rc = pm_plan_map(r->scn, &period, NULL, &r->pm, d);
    if (rc == PM_OK && r->pm)
        rc = sc_pipelined(r, d);
    return rc;
}

/* The maps and the loop-time floor. */
static int sc_compute(const sc_args *a, sc_result *r)
{
    pm_diag d;
    pm_diag_clear(&d);
    int rc = sc_maps(a, r, &d);
    if (rc == PM_EMAP && a->map && !r->m)
        return rc; /* already reported */
    if (rc == PM_OK && a->svg && !r->s) {
        pm_diag_set(&d, a->map, 0, 0, "the map has lags: one iteration spans several rounds "
                    "and has no chart of its own (simulate --svg draws the rounds)");
        rc = PM_EMAP;
    }
    if (rc == PM_OK && r->s) {
        rc = pm_sched_loop_floor(r->g, r->m, &r->floor, &r->loop, &r->nloop, &d);
        if (rc == PM_ELIMIT) { /* an extra, not worth failing the command */
            cli_warning("%s", d.msg);
            rc = PM_OK;
        }
    }
    if (rc != PM_OK) {
        if (!d.msg[0])
            pm_diag_set(&d, r->file, 0, 0, "%s", pm_error_name(rc));
        cli_error(&d);
    }
    return rc;
}

/* A schedule of a million nodes prints hundreds of megabytes: one large
 * buffer instead of the stream's few kilobytes saves most of the write
 * calls.  Nothing has been printed yet (errors go to stderr). */
static void sc_buffer_stdout(void)
{
    static char buf[1 << 20];
    if (!isatty(fileno(stdout)))
        setvbuf(stdout, buf, _IOFBF, sizeof buf);
}

static int sc_run(const sc_args *a, sc_result *r)
{
    int rc = sc_compute(a, r);
    if (rc == PM_OK && a->emit_map)
        rc = cli_write_file(a->emit_map, sc_write_map, r);
    if (rc == PM_OK && a->svg && r->s)
        rc = cli_write_file(a->svg, sc_write_svg, r);
    if (rc != PM_OK)
        return cli_exit_for(rc);
    sc_buffer_stdout();
    rc = a->json ? sc_json(r, a->map != NULL) : sc_text(r);
    if (rc == PM_ENOMEM)
        cli_usage_error("schedule: out of memory");
    if (rc != PM_OK)
        return cli_exit_for(rc);
    return CLI_EXIT_OK;
}

int pm_cmd_schedule(int argc, char **argv)
{
    sc_args a = {0};
    const cli_opt opts[] = {
        {"-p", "--procs", CLI_U32, &a.procs, &a.procs_set,
         "identical cores to schedule on (default: the scenario's)", "N"},
        {"--map", NULL, CLI_STRING, &a.map, NULL, "time this hand map instead of scheduling", "F"},
        {"--emit-map", NULL, CLI_STRING, &a.emit_map, NULL, "write the map to F", "F"},
        {"--svg", NULL, CLI_STRING, &a.svg, NULL, "write a Gantt chart (SVG) to F", "F"},
        {"--json", NULL, CLI_FLAG, &a.json, NULL, "machine-readable output", NULL},
        {"--loop-blind", NULL, CLI_FLAG, &a.loop_blind, NULL,
         "do not keep feedback loops on one core (for comparison)", NULL},
        {"--refine", NULL, CLI_FLAG, &a.refine, NULL,
         "then move nodes between cores while the simulated period drops", NULL},
        {"--pipelined", NULL, CLI_FLAG, &a.pipelined, NULL,
         "also show the period-first map with lags and its period", NULL},
        {NULL, NULL, CLI_FLAG, NULL, NULL, NULL, NULL},
    };
    const cli_cmd cmd = {"schedule", "FILE [-p N] [options]",
                         "Map one iteration of the graph onto cores: per-core order and times, "
                         "transfers, Gantt chart.", opts};
    const char *file = NULL;
    int st = cli_parse(&cmd, argc, argv, &file);
    if (st >= 0)
        return st;
    sc_result r = {.file = file};
    pm_plan scn;
    st = cli_load_scenario(file, a.procs_set, a.procs, &scn);
    if (st != CLI_EXIT_OK)
        return st;
    r.g = scn.graph;
    r.scn = &scn;
    st = sc_run(&a, &r);
    if (st == CLI_EXIT_OK && !a.json)
        cli_print_caution_block();
    pm_sched_destroy(r.s);
    if (r.pm != r.m)
        pm_map_destroy(r.pm);
    pm_map_destroy(r.pm_nodes);
    pm_map_destroy(r.m);
    free(r.loop);
    pm_plan_free(&scn);
    return st;
}
