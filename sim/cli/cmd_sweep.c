/*
 * cmd_sweep.c - `pacemap sweep FILE [-p [CLASS=]A..B] [-n ITER] [--faster N]
 * [--map F] [--svg F] [--csv F] [--json] [--quiet] [--jobs N]`: for each core count, schedule,
 * simulate and name the limit (pm_sweep_run); print the table, the
 * saturation point, the evidence per core count and the what-ifs; write
 * the SVG and CSV files through pm_outfile.  A progress line goes to
 * stderr when it is a terminal (never with --quiet).
 *
 * Range: default 1..16, but never more cores than nodes (extra cores would
 * idle) and never fewer than the pins need.  A platform with named core
 * classes is analysed at its own cores, or with -p CLASS=A..B at each
 * count of one class, the other classes as declared.
 * With --map F the one core count of the map is analysed (a hand map).
 * Core counts are computed on --jobs threads, by default as many as the
 * cores this process may run on; the output is the same for any count.
 */
#define _GNU_SOURCE /* sched_getaffinity */
#include "cli.h"
#include "cmd_sweep_internal.h"

#include <math.h>
#include <sched.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "pacemap/outfile.h"
#include "pacemap/sim.h"

#define SW_WIDTH 100
#define SW_INDENT 16


const char *sw_rat_text(char *buf, size_t n, pm_rat r)
{
    if (r.den == 1) {
        snprintf(buf, n, "%lld", (long long)r.num);
        return buf;
    }
    /* two decimals, trailing zeros dropped: 22.5, 33.33 */
    int len = snprintf(buf, n, "%.2f", pm_rat_to_double(r));
    while (len > 0 && (size_t)len < n && buf[len - 1] == '0')
        buf[--len] = '\0';
    return buf;
}

/* ---- wrapped lines ------------------------------------------------------ */

typedef struct sw_line {
    char buf[2048];
    size_t len;
} sw_line;

static void sw_add(sw_line *l, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void sw_add(sw_line *l, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    if (l->len < sizeof l->buf) {
        int n = vsnprintf(l->buf + l->len, sizeof l->buf - l->len, fmt, ap);
        l->len += n > 0 ? (size_t)n : 0;
        if (l->len >= sizeof l->buf)
            l->len = sizeof l->buf - 1;
    }
    va_end(ap);
}

/* Print `head` then the text wrapped at SW_WIDTH, later lines indented. */
static void sw_print_wrapped(const char *head, const char *s, int indent)
{
    int col = printf("%s", head);
    while (*s) {
        int room = SW_WIDTH - col, n = (int)strlen(s);
        if (n > room) {
            for (n = room; n > 0 && s[n] != ' '; n--)
                ;
            if (n == 0)
                n = room > 0 ? room : 1;
        }
        printf("%.*s\n", n, s);
        s += n;
        while (*s == ' ')
            s++;
        col = *s ? printf("%*s", indent, "") : 0;
    }
    if (col == (int)strlen(head) && col > 0)
        putchar('\n');
}

/* Names joined by sep (a loop closes on its first node); long lists are
 * cut after SW_LIST_MAX names (--json lists them all). */
#define SW_LIST_MAX 12
static void sw_node_list(sw_line *l, const pm_graph *g, const uint32_t *v, uint32_t n,
                         const char *sep, bool close)
{
    uint32_t shown = n > SW_LIST_MAX + 2 ? SW_LIST_MAX : n;
    for (uint32_t i = 0; i < shown; i++)
        sw_add(l, "%s%s", i ? sep : "", pm_graph_node_name(g, v[i]));
    if (shown < n)
        sw_add(l, "%s... %u more", sep, n - shown);
    if (close && n > 0)
        sw_add(l, "%s%s", sep, pm_graph_node_name(g, v[0]));
}

/* ---- the table ---------------------------------------------------------- */

static void sw_text_head(const sw_report *r, uint64_t iterations)
{
    const pm_graph *g = r->g;
    const pm_sweep *s = r->s;
    char a[48];
    sw_line l = {{0}, 0};
    sw_add(&l, "sweep of %s: %u nodes, %u edges, %s, %s = %u..%u, %llu iterations per point",
           r->file, g->nnodes, g->nedges,
           g->platform.interconnect == PM_BUS ? "shared bus" : "point-to-point links",
           s->vary_class == PM_NONE ? "P" : g->platform.class_names[s->vary_class],
           s->points[0].count, s->points[s->npoints - 1].count, (unsigned long long)iterations);
    if (s->vary_class != PM_NONE)
        sw_add(&l, " (the other classes as declared)");
    else if (g->platform.classes_named)
        sw_add(&l, " (core classes: the scenario's own cores only)");
    sw_print_wrapped("", l.buf, 2);
    l.len = 0;
    l.buf[0] = '\0';
    if (s->bound.has_loop) {
        const pm_loop *lp = &s->bound.critical[0];
        sw_add(&l, "iteration bound %s (loop ", sw_rat_text(a, sizeof a, s->bound.iteration_bound));
        sw_node_list(&l, g, lp->nodes, lp->len, " -> ", true);
        sw_add(&l, ": %lld cycles / %lld delay%s); ", (long long)lp->cycles, (long long)lp->delays,
               lp->delays == 1 ? "" : "s");
    } else {
        sw_add(&l, "no loop (feed-forward graph); ");
    }
    sw_add(&l, "total work %lld cycles; largest node %s (%lld)", (long long)s->bound.total_cycles,
           pm_graph_node_name(g, s->bound.largest_node), (long long)s->bound.largest_cycles);
    sw_print_wrapped("", l.buf, 2);
}

/* The count of a point as the user wrote it: "P = 4" or "dsp = 3". */
static const char *sw_count_text(const sw_report *r, uint32_t count, char *buf, size_t n)
{
    if (r->s->vary_class == PM_NONE)
        snprintf(buf, n, "P = %u", count);
    else
        snprintf(buf, n, "%s = %u", r->g->platform.class_names[r->s->vary_class], count);
    return buf;
}

/* Points that run a smaller count's map, their extra cores idle. */
static void sw_text_reused(const sw_report *r)
{
    for (uint32_t i = 0; i < r->s->npoints; i++) {
        const pm_sweep_point *p = &r->s->points[i];
        if (p->map_count == p->count)
            continue;
        char a[48], b[48], c[48], d[48];
        sw_line l = {{0}, 0};
        sw_add(&l, "%s runs the map made for %s (%u core%s idle): its own map's period was "
                   "%s, above %s", sw_count_text(r, p->count, c, sizeof c),
               sw_count_text(r, p->map_count, d, sizeof d), p->idle_cores,
               p->idle_cores == 1 ? "" : "s", sw_rat_text(a, sizeof a, p->own_period),
               sw_rat_text(b, sizeof b, p->period));
        sw_print_wrapped("note: ", l.buf, 6);
    }
}

static void sw_text_table(const sw_report *r)
{
    const pm_sweep *s = r->s;
    const pm_sweep_point *p0 = &s->points[0];
    char a[48];
    putchar('\n');
    sw_write_table(r, stdout, false);
    printf("vs floor: \"optimal\" when the steady period equals the proven map floor,"
           " else how far above it\n");
    printf("speedup: period at P = %u (%s) / period; efficiency: speedup x %u / P\n",
           p0->procs, sw_rat_text(a, sizeof a, p0->period), p0->procs);
    printf("idle: cores the map leaves without a node\n");
    for (uint32_t i = 0; i < s->npoints; i++)
        if (!s->points[i].steady) {
            printf("~ no periodic regime within the iterations run: an average (use -n)\n");
            break;
        }
    sw_text_reused(r);
}

/* ---- evidence ----------------------------------------------------------- */

static void sw_hops(sw_line *l, const pm_graph *g, const pm_sweep_limit *m, const char *lead)
{
    for (uint32_t i = 0; i < m->nhops; i++) {
        const pm_sweep_hop *h = &m->hops[i];
        sw_add(l, "%s%s -> %s core %u>%u (%lld cycles%s)", i ? ", " : lead,
               pm_graph_node_name(g, g->edges[h->edge].src),
               pm_graph_node_name(g, g->edges[h->edge].dst), h->from_core, h->to_core,
               (long long)h->cost, h->bus ? ", bus" : "");
    }
}

static void sw_evidence_mapping(sw_line *l, const pm_graph *g, const pm_sweep_point *p)
{
    const pm_sweep_limit *m = &p->limit;
    char a[48];
    sw_add(l, "a cycle the map made: ");
    sw_node_list(l, g, m->nodes, m->nnodes, " -> ", true);
    sw_add(l, ", %lld cycles over %lld iteration%s%s", (long long)m->cycles, (long long)m->delays,
           m->delays == 1 ? "" : "s", m->exact ? "" : " (chain incomplete)");
    sw_hops(l, g, m, "; transfers ");
    for (uint32_t i = 0; i < m->norders; i++)
        sw_add(l, "%score %u: %s then %s%s", i ? ", " : "; core order ", m->orders[i].core,
               pm_graph_node_name(g, m->orders[i].from), pm_graph_node_name(g, m->orders[i].to),
               m->orders[i].wraps ? " (next iteration)" : "");
    if (m->nbus_waits)
        sw_add(l, "; %u wait%s for the bus", m->nbus_waits, m->nbus_waits == 1 ? "" : "s");
    sw_add(l, "; a better map could reach down to the map floor %s",
           sw_rat_text(a, sizeof a, p->floors.map_floor));
}

static void sw_evidence_loop(sw_line *l, const pm_graph *g, const pm_sweep_limit *m)
{
    sw_node_list(l, g, m->nodes, m->nnodes, " -> ", true);
    sw_add(l, ": %lld cycles / %lld delay%s", (long long)m->cycles, (long long)m->delays,
           m->delays == 1 ? "" : "s");
    if (m->nhops == 0) {
        sw_add(l, ", the iteration bound");
        return;
    }
    int64_t moved = 0;
    for (uint32_t i = 0; i < m->nhops; i++)
        moved += m->hops[i].cost;
    sw_add(l, ", of which %lld in the transfer%s the map put on it: ", (long long)moved,
           m->nhops == 1 ? "" : "s");
    sw_hops(l, g, m, "");
}

static void sw_evidence_cores(sw_line *l, const sw_report *r, const pm_sweep_point *p)
{
    char a[48];
    const pm_sweep_limit *m = &p->limit;
    sw_add(l, "core %u is busy %lld cycles per iteration: ", p->busiest_core,
           (long long)p->busiest);
    sw_node_list(l, r->g, m->nodes, m->nnodes, " ", false);
    if (p->busiest > p->busiest_run)
        sw_add(l, " (%lld) + send/recv %lld", (long long)p->busiest_run,
               (long long)(p->busiest - p->busiest_run));
    sw_add(l, "; %s = %s", r->g->platform.nclasses > 1 ? "work floor" : "work / P",
           sw_rat_text(a, sizeof a, p->floors.cores));
}

static void sw_evidence(sw_line *l, const sw_report *r, const pm_sweep_point *p)
{
    const pm_graph *g = r->g;
    const pm_sweep_limit *m = &p->limit;
    switch (m->kind) {
    case PM_LIMIT_LOOP:
        sw_evidence_loop(l, g, m);
        break;
    case PM_LIMIT_NODE:
        sw_add(l, "node %s takes %lld cycles on its core; it runs whole on one core",
               m->nnodes ? pm_graph_node_name(g, m->nodes[0]) : "?", (long long)m->cycles);
        break;
    case PM_LIMIT_CORES:
        sw_evidence_cores(l, r, p);
        break;
    case PM_LIMIT_BUS:
        sw_add(l, "the bus carries %lld cycles of transfers per iteration (%u edges cross cores)",
               (long long)p->bus_busy, p->cross_edges);
        break;
    case PM_LIMIT_MAPPING:
        sw_evidence_mapping(l, g, p);
        break;
    }
}

static bool sw_same_limit(const pm_sweep_limit *a, const pm_sweep_limit *b)
{
    if (a->kind != b->kind || a->nnodes != b->nnodes || a->cycles != b->cycles ||
        a->kind == PM_LIMIT_CORES || a->kind == PM_LIMIT_BUS || a->nhops != b->nhops)
        return false;
    return memcmp(a->nodes, b->nodes, a->nnodes * sizeof *a->nodes) == 0;
}

static void sw_text_limits(const sw_report *r)
{
    printf("\nWhat limits each core count:\n");
    for (uint32_t i = 0; i < r->s->npoints; i++) {
        const pm_sweep_point *p = &r->s->points[i];
        char head[48];
        snprintf(head, sizeof head, "%5u  %-8s ", p->procs, pm_sweep_limit_name(p->limit.kind));
        sw_line l = {{0}, 0};
        if (i > 0 && sw_same_limit(&p->limit, &r->s->points[i - 1].limit))
            sw_add(&l, "as above");
        else
            sw_evidence(&l, r, p);
        sw_print_wrapped(head, l.buf, SW_INDENT);
    }
}

/* ---- saturation and what-ifs -------------------------------------------- */

static void sw_text_saturation(const sw_report *r)
{
    const pm_sweep *s = r->s;
    const pm_sweep_point *p = &s->points[s->saturation];
    char a[48], c[48];
    sw_line l = {{0}, 0};
    sw_count_text(r, p->count, c, sizeof c);
    if (s->npoints == 1 && !s->saturation_reached) {
        sw_add(&l, "one core count only (%s): nothing to compare", c);
    } else if (!s->saturation_reached) {
        sw_add(&l, "the period still falls at %s (%s): more cores may help; "
                   "widen the range with -p", c, sw_rat_text(a, sizeof a, p->period));
    } else {
        sw_add(&l, "from %s on the period stays at %s%s. Limit (%s): ", c,
               sw_rat_text(a, sizeof a, p->period),
               s->saturation_proven ? ", a floor no core count can move" : "",
               pm_sweep_limit_name(p->limit.kind));
        sw_evidence(&l, r, p);
        sw_add(&l, ".");
    }
    sw_print_wrapped("\nSaturation: ", l.buf, 2);
    const pm_floors *f = &p->floors;
    if (f->has_budget) {
        uint32_t meets = PM_NONE;
        for (uint32_t i = 0; i < s->npoints && meets == PM_NONE; i++)
            if (pm_rat_cmp(s->points[i].period, f->budget) <= 0)
                meets = s->points[i].procs;
        printf("Budget: %s cycles per iteration (clock / rate); ", sw_rat_text(a, sizeof a, f->budget));
        if (meets != PM_NONE)
            printf("met from P = %u\n", meets);
        else
            printf("not met by any core count swept\n");
    }
}

/* The "node faster" rows as a table: node, cycles before and after, the
 * new value (iteration bound, or period of the same map), the binding
 * loop's own ratio, and the lower bound at that core count. */
static void sw_whatif_rows(const sw_report *r)
{
    const pm_sweep_whatif *w = &r->s->whatif;
    const pm_sweep_point *p = &r->s->points[w->point];
    char a[48], b[48], c[48], lb[40];
    if (w->nrows == 0)
        return;
    bool ratio = w->kind != PM_LIMIT_NODE;
    snprintf(lb, sizeof lb, "lower bound at P = %u", p->procs);
    printf("  %-20s %8s %8s %16s %16s %22s\n", "node made faster", "cycles", "now",
           w->same_map ? "period (map)" : w->kind == PM_LIMIT_LOOP ? "iteration bound" : "",
           ratio ? "this loop alone" : "", lb);
    for (uint32_t i = 0; i < w->nrows; i++) {
        const pm_sweep_faster *row = &w->rows[i];
        printf("  %-20.20s %8lld %8lld %16s %16s %22s\n", pm_graph_node_name(r->g, row->node),
               (long long)row->cycles, (long long)row->new_cycles,
               ratio ? sw_rat_text(a, sizeof a, row->after) : "",
               ratio ? sw_rat_text(b, sizeof b, row->loop_alone) : "",
               sw_rat_text(c, sizeof c, row->floor_after));
    }
}

static void sw_whatif_delay(const sw_report *r)
{
    const pm_sweep_whatif *w = &r->s->whatif;
    const pm_edge *e = &r->g->edges[w->delay_edge];
    char a[48], b[48], c[48], head[96];
    sw_line l = {{0}, 0};
    snprintf(head, sizeof head, "  one more delay on %.24s -> %.24s: ",
             pm_graph_node_name(r->g, e->src), pm_graph_node_name(r->g, e->dst));
    sw_add(&l, "iteration bound %s (this loop alone %s), then set by ",
           sw_rat_text(a, sizeof a, w->delay_bound), sw_rat_text(b, sizeof b, w->delay_loop_alone));
    sw_node_list(&l, r->g, w->delay_next, w->ndelay_next, " -> ", true);
    sw_add(&l, "; lower bound at P = %u: %s. Caution: an extra delay in a feedback loop "
               "changes the algorithm's response (re-derive it, e.g. by look-ahead, first).",
           r->s->points[w->point].procs, sw_rat_text(c, sizeof c, w->delay_floor));
    sw_print_wrapped(head, l.buf, 6);
}

static void sw_whatif_next(const sw_report *r)
{
    const pm_sweep_whatif *w = &r->s->whatif;
    char a[48];
    sw_line l = {{0}, 0};
    switch (w->next_kind) {
    case PM_LIMIT_LOOP:
        sw_add(&l, "the loop ");
        sw_node_list(&l, r->g, w->next_nodes, w->nnext_nodes, " -> ", true);
        break;
    case PM_LIMIT_NODE:
        sw_add(&l, "the node %s", w->nnext_nodes ? pm_graph_node_name(r->g, w->next_nodes[0]) : "?");
        break;
    default:
        sw_add(&l, "the work per core (work / P)");
        break;
    }
    sw_add(&l, " at %s cycles per iteration", sw_rat_text(a, sizeof a, w->next_value));
    bool map = w->kind == PM_LIMIT_MAPPING || w->same_map;
    sw_print_wrapped(map ? "  the floors (what a better map could reach): "
                         : "  next bottleneck: ", l.buf, 6);
}

static void sw_text_whatif(const sw_report *r)
{
    const pm_sweep_whatif *w = &r->s->whatif;
    if (!w->present)
        return;
    const pm_sweep_point *p = &r->s->points[w->point];
    printf("\nWhat would move it at P = %u (limit: %s", p->procs, pm_sweep_limit_name(w->kind));
    if (w->nrows)
        printf("; each node %lld cycles faster in turn", (long long)w->faster);
    printf("):\n");
    sw_whatif_rows(r);
    if (w->same_map)
        printf("  (the same map, re-simulated; a different map may avoid the loop altogether)\n");
    if (w->kind == PM_LIMIT_CORES)
        printf("  %s\n", w->point + 1 < r->s->npoints
                              ? "more cores did not help with the maps found (see the limits above)"
                              : "more cores: the period still follows work / P");
    if (w->has_delay)
        sw_whatif_delay(r);
    if (w->has_next)
        sw_whatif_next(r);
}

static void sw_text(const sw_report *r, uint64_t iterations)
{
    sw_text_head(r, iterations);
    sw_text_table(r);
    sw_text_saturation(r);
    sw_text_limits(r);
    sw_text_whatif(r);
    putchar('\n');
    cli_print_caution(100);
}

/* ---- progress ----------------------------------------------------------- */

static void sw_progress(void *ctx, uint32_t procs, uint32_t done, uint32_t total)
{
    (void)ctx;
    fprintf(stderr, "\rsweep: P = %u done (%u of %u)  ", procs, done, total);
    if (done == total)
        fprintf(stderr, "\r%40s\r", "");
    fflush(stderr);
}

/* ---- the command -------------------------------------------------------- */

/* The cores this process may run on (its affinity mask, else the cores
 * online): the default number of threads. */
static uint32_t sw_usable_cores(void)
{
    cpu_set_t set;
    CPU_ZERO(&set);
    if (sched_getaffinity(0, sizeof set, &set) == 0 && CPU_COUNT(&set) > 0)
        return (uint32_t)CPU_COUNT(&set);
    long n = sysconf(_SC_NPROCESSORS_ONLN);
    return n > 0 && n < PM_SWEEP_MAX_POINTS ? (uint32_t)n : 1;
}

/* --map: the scenario at -p N (or its own cores) and the map for it. */
static int sw_load_map(const char *file, sw_args *a, pm_plan *s, pm_map **m)
{
    if (a->range_set && (a->range[0] != a->range[1] || a->class_name)) {
        cli_usage_error("sweep: --map fixes the core count: give -p N or no -p");
        return CLI_EXIT_USAGE;
    }
    int ex = cli_load_scenario(file, a->range_set, a->range[0], s);
    if (ex == CLI_EXIT_OK)
        ex = cli_read_map(s, a->map, m);
    if (ex == CLI_EXIT_OK)
        a->range[0] = a->range[1] = s->graph->platform.ncores;
    return ex;
}

static int sw_outputs(const sw_report *r, const sw_args *a, uint64_t iterations)
{
    if (a->svg && cli_write_file(a->svg, sw_write_svg, r) != PM_OK)
        return CLI_EXIT_INPUT;
    if (a->csv && cli_write_file(a->csv, sw_write_csv, r) != PM_OK)
        return CLI_EXIT_INPUT;
    if (a->json)
        sw_write_json(r, stdout);
    else
        sw_text(r, iterations);
    return CLI_EXIT_OK;
}

static int sw_run(pm_plan *scn, const char *file, const sw_args *a, const pm_map *m)
{
    pm_graph *g = scn->graph;
    uint64_t iterations = a->iterations ? a->iterations : PM_SIM_DEFAULT_ITERATIONS;
    pm_sweep_opts o = {.procs_from = a->range[0], .procs_to = a->range[1],
                       .iterations = iterations, .faster = a->faster,
                       .refine = !a->no_refine, .map = m, .by_class = a->by_class,
                       .vary_class = a->vary_class,
                       .jobs = a->jobs_set ? a->jobs : sw_usable_cores()};
    if (!a->quiet && isatty(STDERR_FILENO))
        o.progress = sw_progress;
    pm_sweep s;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_sweep_run(scn, &o, &s, &d);
    if (rc != PM_OK) {
        if (!d.msg[0])
            pm_diag_set(&d, file, 0, 0, "sweep failed: %s", pm_error_name(rc));
        cli_error(&d);
        pm_sweep_free(&s);
        return rc == PM_EINVAL ? CLI_EXIT_INPUT : cli_exit_for(rc);
    }
    sw_report r = {g, &s, file};
    int ex = sw_outputs(&r, a, iterations);
    pm_sweep_free(&s);
    return ex;
}

int pm_cmd_sweep(int argc, char **argv)
{
    sw_args a = {.range = {1, SW_DEFAULT_TO}, .vary_class = PM_NONE};
    const cli_opt opts[] = {
        {"-p", "--procs", CLI_STRING, &a.procs, NULL,
         "core counts (default 1..16); CLASS=A..B varies one class",
         "[CLASS=]A..B"},
        {"-n", "--iterations", CLI_U32, &a.iterations, &a.iterations_set,
         "iterations simulated per core count (default 1000)", "ITER"},
        {"--faster", NULL, CLI_U32, &a.faster, NULL,
         "cycles taken off one node at a time in the what-ifs (default 10)", "N"},
        {"--no-refine", NULL, CLI_FLAG, &a.no_refine, NULL,
         "use the list schedule's maps as they are (no search for a lower period)", NULL},
        {"--map", NULL, CLI_STRING, &a.map, NULL,
         "analyse this map (one core count) instead of scheduling", "F"},
        {"--svg", NULL, CLI_STRING, &a.svg, NULL, "write a plot of period, floors, throughput",
         "F"},
        {"--csv", NULL, CLI_STRING, &a.csv, NULL, "write one row per core count", "F"},
        {"--json", NULL, CLI_FLAG, &a.json, NULL, "machine output on stdout", NULL},
        {"--quiet", "-q", CLI_FLAG, &a.quiet, NULL,
         "no progress line; results only, the caution in one line", NULL},
        {"--jobs", NULL, CLI_U32, &a.jobs, &a.jobs_set,
         "threads computing core counts (default: the usable cores); same output", "N"},
        {NULL, NULL, CLI_FLAG, NULL, NULL, NULL, NULL}};
    const cli_cmd cmd = {"sweep",
                         "FILE [-p [CLASS=]A..B] [-n ITER] [--map F] [--svg F] [--csv F] [--json]",
                         "For each core count: schedule, simulate, name what limits the period.",
                         opts};
    const char *file;
    int ex = cli_parse(&cmd, argc, argv, &file);
    if (ex >= 0)
        return ex;
    if (a.iterations_set && a.iterations == 0) {
        cli_usage_error("sweep: -n must be at least 1");
        return CLI_EXIT_USAGE;
    }
    if (a.jobs_set && a.jobs == 0) {
        cli_usage_error("sweep: --jobs must be at least 1");
        return CLI_EXIT_USAGE;
    }
    if (a.procs && sw_parse_procs(&a) != CLI_EXIT_OK)
        return CLI_EXIT_USAGE;
    pm_plan scn;
    pm_map *m = NULL;
    memset(&scn, 0, sizeof scn);
    if (a.map)
        ex = sw_load_map(file, &a, &scn, &m);
    else
        ex = cli_load_scenario(file, false, 0, &scn);
    if (ex == CLI_EXIT_OK && !a.map)
        ex = sw_range(scn.graph, file, &a);
    if (ex == CLI_EXIT_OK)
        ex = sw_run(&scn, file, &a, m);
    pm_map_destroy(m);
    pm_plan_free(&scn);
    return ex;
}
