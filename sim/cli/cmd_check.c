/*
 * cmd_check.c - the 'check' command: read and validate a scenario, then
 * summarise it (size, loops, work, platform, budget, repetition vector).
 *
 * Besides what the reader checks, 'check' refuses a graph with a loop that
 * carries no delay: such a graph cannot run at all (every node of the loop
 * waits for another one in the same iteration), so it is reported as an
 * input error naming the loop's nodes in order: the canonical loop of
 * pacemap/order.h, at the same place and in the same words as 'bound'.
 * Loops are counted as strongly connected parts that contain a cycle (two
 * or more nodes, or one node with an edge to itself), from pm_scc (Tarjan
 * and Pearce's algorithm, iterative).  Both checks are O(V + E) and work
 * on multirate graphs too.
 *
 * It does not compute the iteration bound ('bound' does) and does not
 * schedule anything.
 */
#include "cli.h"
#include "pacemap/units.h"

#include "pacemap/json.h"
#include "pacemap/order.h"
#include "pacemap/rational.h"
#include "pacemap/scc.h"
#include "pacemap/sdf.h"

#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* PM_EZERODELAY (reported) when some loop carries no delay at all: such a
 * graph cannot run, whatever its rates.  The loop named is the one 'bound'
 * names (pm_order_check_zero_delay). */
static int check_zero_delay_loops(const pm_graph *g)
{
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_order_check_zero_delay(g, &d);
    if (rc == PM_EZERODELAY)
        cli_error(&d);
    return rc;
}

/* What the summary reports, gathered before printing. */
typedef struct check_summary {
    uint32_t loops;          /* cyclic strongly connected parts */
    uint32_t largest_loop;   /* nodes in the largest of them */
    uint32_t delay_edges;    /* edges with at least one delay */
    uint32_t pinned;
    int64_t total_cycles;    /* per iteration: sum of firings x fastest time */
    uint64_t *rep;           /* repetition vector (owned) */
    bool single_rate;
    bool has_budget;
    pm_rat budget;           /* clock / rate, cycles per iteration */
} check_summary;

static int check_count_loops(const pm_graph *g, check_summary *sum)
{
    pm_scc s;
    int rc = pm_scc_compute(g, NULL, NULL, &s);
    if (rc != PM_OK)
        return rc;
    for (uint32_t c = 0; c < s.ncomp; c++) {
        if (!pm_scc_has_cycle(g, &s, c, NULL, NULL))
            continue;
        uint32_t size = s.start[c + 1] - s.start[c];
        sum->loops++;
        if (size > sum->largest_loop)
            sum->largest_loop = size;
    }
    pm_scc_free(&s);
    return PM_OK;
}

/* Total work per iteration, with overflow checks (a node no class can run
 * is a platform error). */
static int check_total_cycles(const pm_graph *g, check_summary *sum, pm_diag *d)
{
    int64_t total = 0;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        int64_t t = pm_graph_min_cycles(g, v), w;
        const pm_node *n = &g->nodes[v];
        if (t < 0) {
            pm_diag_set(d, g->file, n->line, n->col, "node '%s' can run on no core class",
                        pm_graph_node_name(g, v));
            return PM_EPLATFORM;
        }
        if (sum->rep[v] > (uint64_t)INT64_MAX ||
            __builtin_mul_overflow(t, (int64_t)sum->rep[v], &w) ||
            __builtin_add_overflow(total, w, &total) || total > PM_MAX_VALUE) {
            pm_diag_set(d, g->file, n->line, n->col,
                        "total cycles per iteration exceed 62 bits at node '%s'",
                        pm_graph_node_name(g, v));
            return PM_ERANGE;
        }
    }
    sum->total_cycles = total;
    return PM_OK;
}

static void check_platform_facts(const pm_graph *g, check_summary *sum)
{
    const pm_platform *p = &g->platform;
    for (uint32_t e = 0; e < g->nedges; e++)
        if (g->edges[e].delay > 0)
            sum->delay_edges++;
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (g->nodes[v].pin_core != PM_NONE || g->nodes[v].pin_class != PM_NONE)
            sum->pinned++;
    sum->single_rate = pm_graph_is_single_rate(g);
    sum->has_budget = p->clock_hz > 0 && p->rate_hz > 0 && p->clock_hz <= INT64_MAX &&
                      p->rate_hz <= INT64_MAX &&
                      pm_rat_make((int64_t)p->clock_hz, (int64_t)p->rate_hz,
                                  &sum->budget) == PM_OK;
}

/* Everything the summary needs; errors are printed here.  Returns an exit
 * status. */
static int check_analyse(const pm_graph *g, check_summary *sum)
{
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_sdf_repetition(g, &sum->rep, &d);
    if (rc == PM_OK)
        rc = check_total_cycles(g, sum, &d);
    if (rc != PM_OK && rc != PM_ENOMEM) {
        cli_error(&d);
        return cli_exit_for(rc);
    }
    if (rc == PM_OK)
        rc = check_zero_delay_loops(g);
    if (rc == PM_OK)
        rc = check_count_loops(g, sum);
    if (rc == PM_ENOMEM)
        cli_usage_error("check: out of memory");
    if (rc != PM_OK)
        return CLI_EXIT_INPUT;
    check_platform_facts(g, sum);
    return CLI_EXIT_OK;
}

/* ---- human output ------------------------------------------------------ */

/* "600 MHz", "44.1 kHz": the one style of every report (units.h). */
static void check_format_hz(uint64_t hz, char *buf, size_t cap)
{
    pm_units_freq(buf, cap, hz);
}

static void check_format_rat(pm_rat r, char *buf, size_t cap)
{
    if (r.den == 1)
        snprintf(buf, cap, "%" PRId64, r.num);
    else
        snprintf(buf, cap, "%" PRId64 "/%" PRId64 " (%.2f)", r.num, r.den,
                 pm_rat_to_double(r));
}

static void check_print_cores(const pm_graph *g)
{
    const pm_platform *p = &g->platform;
    if (!p->classes_named) {
        printf("%-12s %u identical%s\n", "cores", p->ncores,
               p->procs_given ? "" : " (no procs line: default)");
        return;
    }
    printf("%-12s %u in %u classes:", "cores", p->ncores, p->nclasses);
    uint32_t first = 0;
    for (uint32_t c = 0; c < p->nclasses; c++) {
        uint32_t n = p->class_count[c];
        if (n == 1)
            printf("%s %s x1 (core %u)", c ? "," : "", p->class_names[c], first);
        else
            printf("%s %s x%u (cores %u-%u)", c ? "," : "", p->class_names[c], n, first,
                   first + n - 1);
        first += n;
    }
    putchar('\n');
}

static void check_print_platform(const pm_graph *g, const check_summary *sum)
{
    const pm_platform *p = &g->platform;
    char a[64], b[64];
    check_print_cores(g);
    printf("%-12s latency %" PRId64 ", per word %" PRId64 ", send %" PRId64
           ", recv %" PRId64 " cycles; %s\n", "transfers", p->comm.latency,
           p->comm.per_word, p->comm.send, p->comm.recv,
           p->interconnect == PM_BUS ? "one shared bus" : "point-to-point links");
    if (p->clock_hz) {
        check_format_hz(p->clock_hz, a, sizeof a);
        printf("%-12s %s\n", "clock", a);
    }
    if (p->rate_hz) {
        check_format_hz(p->rate_hz, a, sizeof a);
        printf("%-12s %s (iterations per second the application needs)\n", "rate", a);
    }
    if (sum->has_budget) {
        check_format_rat(sum->budget, b, sizeof b);
        printf("%-12s %s cycles per iteration (clock / rate)\n", "budget", b);
    } else {
        printf("%-12s none (needs both clock and rate)\n", "budget");
    }
}

/* The non-trivial entries of the repetition vector, a few per line. */
static void check_print_repetition(const pm_graph *g, const check_summary *sum)
{
    if (sum->single_rate) {
        printf("%-12s every node fires once per iteration (single rate)\n", "repetition");
        return;
    }
    int col = printf("%-12s", "repetition");
    uint32_t shown = 0;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        if (shown == 40) {
            printf(" ... (see --json for all)");
            break;
        }
        char item[300];
        int w = snprintf(item, sizeof item, " %s x%" PRIu64, pm_graph_node_name(g, v),
                         sum->rep[v]);
        if (col + w > 98) {
            printf("\n%-12s", "");
            col = 12;
        }
        fputs(item, stdout);
        col += w;
        shown++;
    }
    putchar('\n');
}

static void check_print_text(const char *file, const pm_graph *g,
                             const check_summary *sum)
{
    const pm_platform *p = &g->platform;
    printf("%s: the scenario is valid\n\n", file);
    printf("%-12s %s\n", "title", p->title ? p->title : "(none)");
    printf("%-12s %u (%u pinned)\n", "nodes", g->nnodes, sum->pinned);
    printf("%-12s %u (%u with delays)\n", "edges", g->nedges, sum->delay_edges);
    if (sum->loops)
        printf("%-12s %u strongly connected part%s with a loop (largest: %u node%s)\n",
               "loops", sum->loops, sum->loops == 1 ? "" : "s", sum->largest_loop,
               sum->largest_loop == 1 ? "" : "s");
    else
        printf("%-12s none (feed-forward: no iteration bound; the cores set the floor)\n",
               "loops");
    printf("%-12s %" PRId64 " cycles per iteration%s\n", "work", sum->total_cycles,
           p->classes_named ? " (each node on its fastest class)" : "");
    check_print_platform(g, sum);
    check_print_repetition(g, sum);
}

/* ---- JSON output ------------------------------------------------------- */

static void check_json_platform(pm_json *j, const pm_graph *g, const check_summary *sum)
{
    const pm_platform *p = &g->platform;
    pm_json_key(j, "platform");
    pm_json_object_begin(j);
    pm_json_key(j, "cores");
    pm_json_uint(j, p->ncores);
    pm_json_key(j, "classes_named");
    pm_json_bool(j, p->classes_named);
    pm_json_key(j, "classes");
    pm_json_array_begin(j);
    for (uint32_t c = 0; c < p->nclasses; c++) {
        pm_json_object_begin(j);
        pm_json_key(j, "name");
        pm_json_string(j, p->class_names[c]);
        pm_json_key(j, "count");
        pm_json_uint(j, p->class_count[c]);
        pm_json_object_end(j);
    }
    pm_json_array_end(j);
    pm_json_key(j, "comm");
    pm_json_object_begin(j);
    pm_json_key(j, "latency");
    pm_json_int(j, p->comm.latency);
    pm_json_key(j, "per_word");
    pm_json_int(j, p->comm.per_word);
    pm_json_key(j, "send");
    pm_json_int(j, p->comm.send);
    pm_json_key(j, "recv");
    pm_json_int(j, p->comm.recv);
    pm_json_object_end(j);
    pm_json_key(j, "interconnect");
    pm_json_string(j, p->interconnect == PM_BUS ? "bus" : "p2p");
    pm_json_key(j, "clock_hz");
    p->clock_hz ? pm_json_uint(j, p->clock_hz) : pm_json_null(j);
    pm_json_key(j, "rate_hz");
    p->rate_hz ? pm_json_uint(j, p->rate_hz) : pm_json_null(j);
    pm_json_key(j, "budget");
    sum->has_budget ? pm_json_rat(j, sum->budget) : pm_json_null(j);
    pm_json_object_end(j);
}

static void check_print_json(const char *file, const pm_graph *g,
                             const check_summary *sum)
{
    pm_json j;
    pm_json_init(&j, stdout, 2);
    pm_json_object_begin(&j);
    pm_json_key(&j, "file");
    pm_json_string(&j, file);
    pm_json_key(&j, "title");
    g->platform.title ? pm_json_string(&j, g->platform.title) : pm_json_null(&j);
    pm_json_key(&j, "nodes");
    pm_json_uint(&j, g->nnodes);
    pm_json_key(&j, "edges");
    pm_json_uint(&j, g->nedges);
    pm_json_key(&j, "delay_edges");
    pm_json_uint(&j, sum->delay_edges);
    pm_json_key(&j, "pinned");
    pm_json_uint(&j, sum->pinned);
    pm_json_key(&j, "loops");
    pm_json_uint(&j, sum->loops);
    pm_json_key(&j, "total_cycles");
    pm_json_int(&j, sum->total_cycles);
    pm_json_key(&j, "single_rate");
    pm_json_bool(&j, sum->single_rate);
    pm_json_key(&j, "repetition");
    pm_json_object_begin(&j);
    for (uint32_t v = 0; v < g->nnodes; v++) {
        pm_json_key(&j, pm_graph_node_name(g, v));
        pm_json_uint(&j, sum->rep[v]);
    }
    pm_json_object_end(&j);
    check_json_platform(&j, g, sum);
    pm_json_object_end(&j);
    pm_json_finish(&j);
}

int pm_cmd_check(int argc, char **argv)
{
    uint32_t procs = 0;
    bool procs_set = false, json = false;
    const cli_opt opts[] = {
        { "-p", "--procs", CLI_U32, &procs, &procs_set,
          "number of identical cores (overrides the procs line)", "N" },
        { "--json", NULL, CLI_FLAG, &json, NULL, "machine output (docs/schema.json)", NULL },
        { NULL, NULL, CLI_FLAG, NULL, NULL, NULL, NULL },
    };
    const cli_cmd cmd = { "check", "FILE [-p N] [--json]",
                          "Read and validate a scenario; summarise its graph, loops, "
                          "work, platform and repetition vector.", opts };
    const char *file;
    int st = cli_parse(&cmd, argc, argv, &file);
    if (st >= 0)
        return st;
    pm_plan scn;
    st = cli_load_scenario(file, procs_set, procs, &scn);
    if (st != CLI_EXIT_OK)
        return st;
    const pm_graph *g = scn.source;
    check_summary sum = { 0 };
    st = check_analyse(g, &sum);
    if (st == CLI_EXIT_OK && json)
        check_print_json(file, g, &sum);
    else if (st == CLI_EXIT_OK)
        check_print_text(file, g, &sum);
    free(sum.rep);
    pm_plan_free(&scn);
    return st;
}
