/*
 * cmd_bound.c - `pacemap bound FILE [-p N] [--loops N] [--json]`: the exact
 * iteration bound, the loops that set it, the parts with loops worst first
 * (the next bottlenecks), the floors for P cores and the real-time budget.
 *
 * Prints only; the numbers come from pm_bound_compute and pm_bound_floors
 * (sched/bound/bound.c, sched/bound/floors.c).  What it does not do: schedule.
 */
#include "cli.h"
#include "pacemap/units.h"

#include "pacemap/bound.h"
#include "pacemap/json.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#define BOUND_MAX_PARTS 20  /* parts listed, worst first */
#define BOUND_LOOP_WIDTH 60 /* characters of a loop's node list in text */

typedef struct cb_args {
    uint32_t procs, loops;
    bool procs_set, json;
} cb_args;

/* "37/2 = 18.5" or "40". */
static const char *cb_fmt_rat(char *buf, size_t len, pm_rat r)
{
    if (r.den == 1)
        snprintf(buf, len, "%lld", (long long)r.num);
    else
        snprintf(buf, len, "%lld/%lld = %.6g", (long long)r.num, (long long)r.den,
                 pm_rat_to_double(r));
    return buf;
}

/* "a -> b -> c -> a", the middle left out past `width` characters. */
static const char *cb_fmt_loop(char *buf, size_t len, const pm_graph *g, const pm_loop *l,
                            size_t width)
{
    size_t at = 0, cap = width < len ? width : len - 1, full = 0;
    buf[0] = '\0';
    const char *last = pm_graph_node_name(g, l->nodes[0]);
    for (uint32_t i = 0; i <= l->len && full <= cap; i++)
        full += strlen(pm_graph_node_name(g, l->nodes[i % l->len])) + (i ? 4 : 0);
    if (full <= cap)
        cap = len - 1; /* it all fits: no shortening */
    for (uint32_t i = 0; i <= l->len; i++) {
        const char *name = pm_graph_node_name(g, l->nodes[i % l->len]);
        bool end = i == l->len;
        /* room for this name and a closing " -> ... (N nodes) -> last" */
        if (!end && at + strlen(name) + strlen(last) + 32 > cap) {
            snprintf(buf + at, len - at, "%s... (%u nodes) -> %s", i ? " -> " : "", l->len,
                     last);
            return buf;
        }
        int n = snprintf(buf + at, len - at, "%s%s", i ? " -> " : "", name);
        at += n > 0 ? (size_t)n : 0;
        if (at >= len)
            break;
    }
    return buf;
}

/* Nodes at the start (*pre) and at the end (*suf) that every listed
 * critical loop shares, position by position; 0 and 0 for one loop. */
static void cb_shared_ends(const pm_bound *b, uint32_t *pre, uint32_t *suf)
{
    *pre = *suf = 0;
    if (b->ncritical < 2)
        return;
    const pm_loop *a = &b->critical[0];
    *pre = *suf = a->len;
    for (uint32_t i = 1; i < b->ncritical; i++) {
        const pm_loop *l = &b->critical[i];
        uint32_t k = 0, m = a->len < l->len ? a->len : l->len;
        while (k < *pre && k < m && a->nodes[k] == l->nodes[k])
            k++;
        *pre = k;
        for (k = 0; k < *suf && k < m && a->nodes[a->len - 1 - k] == l->nodes[l->len - 1 - k];)
            k++;
        *suf = k;
    }
}

/* Loop l with its shared start and end folded to "[N shared]", so loops
 * that differ in the middle stay apart; the plain form when it fits. */
static const char *cb_fmt_loop_apart(char *buf, size_t len, const pm_graph *g,
                                     const pm_loop *l, uint32_t pre, uint32_t suf)
{
    cb_fmt_loop(buf, len, g, l, len - 1);
    if (strlen(buf) <= BOUND_LOOP_WIDTH || pre + suf >= l->len)
        return cb_fmt_loop(buf, len, g, l, BOUND_LOOP_WIDTH);
    /* nodes[0] shows, so a shared start folds nodes 1 .. pre-1 */
    uint32_t fold_pre = pre > 1 ? pre - 1 : 0, first = pre > 1 ? pre : 1;
    size_t at = (size_t)snprintf(buf, len, "%s", pm_graph_node_name(g, l->nodes[0]));
    if (fold_pre)
        at += (size_t)snprintf(buf + at, len - at, " -> [%u shared]", fold_pre);
    uint32_t end = l->len - suf;
    for (uint32_t i = first; i < end && at < len; i++) {
        if (at + 40 > BOUND_LOOP_WIDTH && i + 1 < end) {
            at += (size_t)snprintf(buf + at, len - at, " -> ... (%u)", end - i - 1);
            i = end - 2;
            continue;
        }
        at += (size_t)snprintf(buf + at, len - at, " -> %s", pm_graph_node_name(g, l->nodes[i]));
    }
    if (suf && at < len)
        at += (size_t)snprintf(buf + at, len - at, " -> [%u shared]", suf);
    if (at < len)
        snprintf(buf + at, len - at, " -> %s", pm_graph_node_name(g, l->nodes[0]));
    return buf;
}

static void cb_text_critical(const pm_graph *g, const pm_bound *b)
{
    char lb[512];
    uint32_t pre, suf;
    bool folded = false;
    cb_shared_ends(b, &pre, &suf);
    printf("\ncritical loops (%u%s):\n", b->ncritical,
           b->critical_truncated ? ", more exist" : "");
    for (uint32_t i = 0; i < b->ncritical; i++) {
        const pm_loop *l = &b->critical[i];
        cb_fmt_loop_apart(lb, sizeof lb, g, l, pre, suf);
        folded = folded || strstr(lb, " shared]") != NULL;
        printf("  %-*s %lld cycles / %lld %s\n", BOUND_LOOP_WIDTH, lb, (long long)l->cycles,
               (long long)l->delays, l->delays == 1 ? "delay" : "delays");
    }
    if (folded)
        printf("  [N shared]: N nodes every loop above has at that place (--json lists "
               "them all)\n");
}

static void cb_text_parts(const pm_graph *g, const pm_bound *b)
{
    char rb[64], lb[256];
    printf("\nparts with loops, worst first (%u of %u):\n", b->nparts, b->nparts_total);
    printf("  %-24s %8s  %s\n", "bound", "nodes", "a loop that sets it");
    for (uint32_t i = 0; i < b->nparts; i++) {
        const pm_part *p = &b->parts[i];
        printf("  %-24s %8u  %s\n", cb_fmt_rat(rb, sizeof rb, p->bound), p->nnodes,
               cb_fmt_loop(lb, sizeof lb, g, &p->worst, 64));
    }
}

/* What sets a floor, in words. */
static const char *cb_floor_words(pm_floor_kind k)
{
    switch (k) {
    case PM_FLOOR_LOOP: return "the critical loop";
    case PM_FLOOR_NODE: return "the largest node";
    case PM_FLOOR_CORES: return "the total work on the cores";
    case PM_FLOOR_PACKING: return "whole nodes on the cores (packing)";
    case PM_FLOOR_PINNED: return "the nodes pinned to one core";
    case PM_FLOOR_BUS: return "transfers the pins force onto the bus";
    case PM_FLOOR_SEARCH: return "the best map's busiest core (exhaustive search)";
    }
    return "?";
}

/* The floors only whole-node maps obey, when they add something, and the
 * map floor (docs/methods.md gives each proof). */
static void cb_text_map_floor(const pm_graph *g, const pm_floors *f)
{
    char rb[64], what[160];
    if (f->packing.num > 0)
        printf("  %-40s %s\n", "packing (whole nodes on the cores)",
               cb_fmt_rat(rb, sizeof rb, f->packing));
    if (f->pinned.num > 0) {
        snprintf(what, sizeof what, "pinned (core %u)", f->pinned_core);
        printf("  %-40s %s\n", what, cb_fmt_rat(rb, sizeof rb, f->pinned));
    }
    if (g->platform.interconnect == PM_BUS && f->bus.num > 0)
        printf("  %-40s %s\n", "bus (transfers the pins force across)",
               cb_fmt_rat(rb, sizeof rb, f->bus));
    printf("  %-40s %s   set by: %s\n", "map floor", cb_fmt_rat(rb, sizeof rb, f->map_floor),
           cb_floor_words(f->map_binding));
}

static void cb_text_floors(const pm_graph *g, const pm_bound *b, const pm_floors *f)
{
    char rb[64], what[160];
    printf("\nfloors for %u core%s (cycles per iteration):\n", f->procs,
           f->procs == 1 ? "" : "s");
    if (f->has_loop)
        printf("  %-40s %s\n", "loop (iteration bound)", cb_fmt_rat(rb, sizeof rb, f->loop));
    else
        printf("  %-40s %s\n", "loop (iteration bound)", "none");
    snprintf(what, sizeof what, "largest node (%.*s)", 24,
             b->largest_node == PM_NONE ? "-" : pm_graph_node_name(g, b->largest_node));
    printf("  %-40s %s\n", what, cb_fmt_rat(rb, sizeof rb, f->node));
    if (g->platform.nclasses > 1 && f->procs == g->platform.ncores)
        snprintf(what, sizeof what, "cores (work split over the classes)");
    else
        snprintf(what, sizeof what, "cores (%lld total / %u)", (long long)b->total_cycles,
                 f->procs);
    printf("  %-40s %s\n", what, cb_fmt_rat(rb, sizeof rb, f->cores));
    printf("  %-40s %s   set by: %s\n", "lower bound", cb_fmt_rat(rb, sizeof rb, f->lower_bound),
           cb_floor_words(f->binding));
    cb_text_map_floor(g, f);
}

static void cb_text_budget(const pm_graph *g, const pm_floors *f)
{
    char rb[64], clk[PM_UNITS_LEN], rate[PM_UNITS_LEN], t[PM_UNITS_LEN];
    uint64_t hz = g->platform.clock_hz;
    printf("\nbudget at %s and %s: %s cycles per iteration (%s)\n",
           pm_units_freq(clk, sizeof clk, hz), pm_units_freq(rate, sizeof rate, g->platform.rate_hz),
           cb_fmt_rat(rb, sizeof rb, f->budget),
           pm_units_cycles(t, sizeof t, pm_rat_to_double(f->budget), hz));
    if (f->has_loop)
        printf("  iteration bound: %s\n", f->loop_fits ? "fits" : "DOES NOT FIT");
    printf("  lower bound:     %s, margin %s cycles (%s%s)\n",
           f->lower_fits ? "fits" : "DOES NOT FIT", cb_fmt_rat(rb, sizeof rb, f->margin),
           f->margin_us < 0 ? "-" : "", pm_units_time(t, sizeof t, fabs(f->margin_us) * 1e-6));
}

/* The first line; a multirate scenario says it was expanded to firings,
 * since the loops, counts and bound below are those of the firings. */
static void cb_text_title(const char *file, const pm_plan *p, const pm_bound *b)
{
    const pm_graph *g = p->graph;
    if (p->multirate)
        printf("%s: %u nodes -> %u firings, %u edges, %u part%s with loops\n"
               "multirate: expanded to one node per firing of an iteration; the loops "
               "below are of firings\n\n", file, p->source->nnodes, g->nnodes, g->nedges,
               b->nparts_total, b->nparts_total == 1 ? "" : "s");
    else
        printf("%s: %u nodes, %u edges, %u part%s with loops\n\n", file, g->nnodes,
               g->nedges, b->nparts_total, b->nparts_total == 1 ? "" : "s");
}

static void cb_text(const char *file, const pm_plan *p, const pm_bound *b,
                       const pm_floors *f)
{
    char rb[64];
    const pm_graph *g = p->graph;
    cb_text_title(file, p, b);
    if (!b->has_loop) {
        printf("iteration bound: none - the graph has no loop, so no loop bounds it;\n"
               "the floor comes from the cores alone (work / P, the largest node)\n");
    } else {
        printf("iteration bound: %s cycles per iteration", cb_fmt_rat(rb, sizeof rb,
                                                                   b->iteration_bound));
        if (g->platform.clock_hz) {
            char t[PM_UNITS_LEN], clk[PM_UNITS_LEN];
            printf(" (%s at %s)", pm_units_cycles(t, sizeof t,
                                                  pm_rat_to_double(b->iteration_bound),
                                                  g->platform.clock_hz),
                   pm_units_freq(clk, sizeof clk, g->platform.clock_hz));
        }
        printf("\n");
        cb_text_critical(g, b);
        cb_text_parts(g, b);
    }
    cb_text_floors(g, b, f);
    if (f->has_budget)
        cb_text_budget(g, f);
    printf("\n");
    cli_print_caution(80);
}

static void cb_json_parts(pm_json *j, const pm_graph *g, const pm_bound *b)
{
    pm_json_key(j, "parts");
    pm_json_array_begin(j);
    for (uint32_t i = 0; i < b->nparts; i++) {
        pm_json_object_begin(j);
        pm_json_key(j, "nodes");
        pm_json_uint(j, b->parts[i].nnodes);
        pm_json_key(j, "first_node");
        pm_json_string(j, pm_graph_node_name(g, b->parts[i].first_node));
        pm_json_key(j, "bound");
        pm_json_rat(j, b->parts[i].bound);
        pm_json_key(j, "worst_loop");
        cli_json_loop(j, g, &b->parts[i].worst);
        pm_json_object_end(j);
    }
    pm_json_array_end(j);
    pm_json_key(j, "parts_total");
    pm_json_uint(j, b->nparts_total);
}

static void cb_json_floors(pm_json *j, const pm_graph *g, const pm_bound *b, const pm_floors *f)
{
    pm_json_key(j, "floors");
    pm_json_object_begin(j);
    pm_json_key(j, "loop");
    if (f->has_loop)
        pm_json_rat(j, f->loop);
    else
        pm_json_null(j);
    pm_json_key(j, "node");
    pm_json_rat(j, f->node);
    pm_json_key(j, "largest_node");
    if (b->largest_node == PM_NONE)
        pm_json_null(j);
    else
        pm_json_string(j, pm_graph_node_name(g, b->largest_node));
    pm_json_key(j, "cores");
    pm_json_rat(j, f->cores);
    pm_json_key(j, "packing");
    pm_json_rat(j, f->packing);
    pm_json_key(j, "pinned");
    pm_json_rat(j, f->pinned);
    pm_json_key(j, "bus");
    pm_json_rat(j, f->bus);
    pm_json_object_end(j);
    pm_json_key(j, "binding");
    pm_json_string(j, pm_bound_floor_name(f->binding));
    pm_json_key(j, "map_floor");
    pm_json_rat(j, f->map_floor);
    pm_json_key(j, "map_binding");
    pm_json_string(j, pm_bound_floor_name(f->map_binding));
}

static void cb_json_budget(pm_json *j, const pm_graph *g, const pm_floors *f)
{
    pm_json_key(j, "budget");
    if (!f->has_budget) {
        pm_json_null(j);
        return;
    }
    pm_json_object_begin(j);
    pm_json_key(j, "clock_hz");
    pm_json_uint(j, g->platform.clock_hz);
    pm_json_key(j, "rate_hz");
    pm_json_uint(j, g->platform.rate_hz);
    pm_json_key(j, "cycles");
    pm_json_rat(j, f->budget);
    pm_json_key(j, "loop_fits");
    pm_json_bool(j, f->loop_fits);
    pm_json_key(j, "lower_fits");
    pm_json_bool(j, f->lower_fits);
    pm_json_key(j, "margin_cycles");
    pm_json_rat(j, f->margin);
    pm_json_key(j, "margin_us");
    pm_json_double(j, f->margin_us);
    pm_json_object_end(j);
}

static void cb_json(const char *file, const pm_graph *g, const pm_bound *b,
                       const pm_floors *f)
{
    pm_json j;
    pm_json_init(&j, stdout, 2);
    pm_json_object_begin(&j);
    pm_json_key(&j, "file");
    pm_json_string(&j, file);
    pm_json_key(&j, "iteration_bound");
    if (b->has_loop)
        pm_json_rat(&j, b->iteration_bound);
    else
        pm_json_null(&j);
    pm_json_key(&j, "critical_loops");
    pm_json_array_begin(&j);
    for (uint32_t i = 0; i < b->ncritical; i++)
        cli_json_loop(&j, g, &b->critical[i]);
    pm_json_array_end(&j);
    pm_json_key(&j, "critical_truncated");
    pm_json_bool(&j, b->critical_truncated);
    pm_json_key(&j, "total_cycles");
    pm_json_int(&j, b->total_cycles);
    pm_json_key(&j, "procs");
    pm_json_uint(&j, f->procs);
    pm_json_key(&j, "lower_bound");
    pm_json_rat(&j, f->lower_bound);
    cb_json_floors(&j, g, b, f);
    cb_json_parts(&j, g, b);
    cb_json_budget(&j, g, f);
    cli_json_caution(&j);
    pm_json_object_end(&j);
    pm_json_finish(&j);
}

static int cb_fail(const pm_graph *g, int rc, pm_diag *d)
{
    if (!d->msg[0])
        pm_diag_set(d, g->file, 0, 0, "bound: %s", pm_error_name(rc));
    cli_error(d);
    return cli_exit_for(rc);
}

int pm_cmd_bound(int argc, char **argv)
{
    cb_args a = { .loops = PM_BOUND_DEFAULT_MAX_CRITICAL };
    const cli_opt opts[] = {
        { "-p", "--procs", CLI_U32, &a.procs, &a.procs_set,
          "cores for the floors (default: the scenario's procs)", "N" },
        { "--loops", NULL, CLI_U32, &a.loops, NULL,
          "critical loops listed at most (default 16)", "N" },
        { "--json", NULL, CLI_FLAG, &a.json, NULL, "machine output (JSON)", NULL },
        { NULL, NULL, CLI_FLAG, NULL, NULL, NULL, NULL },
    };
    const cli_cmd cmd = { "bound", "FILE [-p N] [--loops N] [--json]",
                          "Exact iteration bound, the loops that set it, and the floors "
                          "for P cores.", opts };
    const char *file;
    int st = cli_parse(&cmd, argc, argv, &file);
    if (st >= 0)
        return st;
    if (a.loops == 0) {
        cli_usage_error("bound: --loops must be at least 1");
        return CLI_EXIT_USAGE;
    }
    pm_plan plan;
    st = cli_load_scenario(file, a.procs_set, a.procs, &plan);
    if (st != CLI_EXIT_OK)
        return st;
    const pm_graph *g = plan.graph;
    pm_bound b;
    pm_floors f;
    pm_diag d;
    pm_diag_clear(&d);
    pm_bound_opts bo = { .max_critical = a.loops, .max_parts = BOUND_MAX_PARTS };
    int rc = pm_bound_compute(g, &bo, &b, &d);
    if (rc == PM_OK)
        rc = pm_bound_floors(g, &b, g->platform.ncores, &f);
    if (rc == PM_OK && a.json)
        cb_json(file, g, &b, &f);
    else if (rc == PM_OK)
        cb_text(file, &plan, &b, &f);
    else
        st = cb_fail(g, rc, &d);
    pm_bound_free(&b);
    pm_plan_free(&plan);
    return st;
}
