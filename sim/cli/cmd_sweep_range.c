/*
 * cmd_sweep_range.c - which core counts the sweep command tries: `-p A..B`,
 * `-p N`, `-p CLASS=A..B` parsed with a usage error that says why for an
 * empty, one-ended or reversed range, a bad count or an unknown class (with
 * the nearest class name); then checked against the scenario (pins, at
 * most one core per node) or, without -p, the default range.
 */
#include "cli.h"
#include "cmd_sweep_internal.h"

#include <string.h>

/* The pinned node that needs the most cores. */
static uint32_t sw_pinned_node(const pm_graph *g)
{
    uint32_t best = PM_NONE;
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (g->nodes[v].pin_core != PM_NONE &&
            (best == PM_NONE || g->nodes[v].pin_core > g->nodes[best].pin_core))
            best = v;
    return best;
}

/* One count of -p: decimal digits, 1 .. SW_MAX_COUNT. */
#define SW_MAX_COUNT 4096u
static int sw_count(const char *opt, const char *s, size_t n, uint32_t *out)
{
    uint32_t v = 0;
    for (size_t i = 0; i < n; i++) {
        if (s[i] < '0' || s[i] > '9' || v > SW_MAX_COUNT) {
            cli_usage_error("sweep: -p %s: '%.*s' is not a core count", opt, (int)n, s);
            return CLI_EXIT_USAGE;
        }
        v = v * 10 + (uint32_t)(s[i] - '0');
    }
    if (v == 0 || v > SW_MAX_COUNT) {
        cli_usage_error("sweep: -p %s: core counts go from 1 to %u", opt, SW_MAX_COUNT);
        return CLI_EXIT_USAGE;
    }
    *out = v;
    return CLI_EXIT_OK;
}

int sw_parse_procs(sw_args *a)
{
    const char *opt = a->procs, *eq = strchr(opt, '='), *r = eq ? eq + 1 : opt;
    if (eq && eq == opt) {
        cli_usage_error("sweep: -p %s: no class name before '='", opt);
        return CLI_EXIT_USAGE;
    }
    a->class_name = eq ? opt : NULL;
    a->class_len = eq ? (size_t)(eq - opt) : 0;
    const char *dots = strstr(r, "..");
    if (*r == '\0') {
        cli_usage_error("sweep: -p %s: the range is empty; write A..B (e.g. %s1..8) or one "
                        "count", opt, eq ? "CLASS=" : "");
        return CLI_EXIT_USAGE;
    }
    if (dots && (dots == r || dots[2] == '\0')) {
        cli_usage_error("sweep: -p %s: the range needs both ends, A..B", opt);
        return CLI_EXIT_USAGE;
    }
    size_t first = dots ? (size_t)(dots - r) : strlen(r);
    int ex = sw_count(opt, r, first, &a->range[0]);
    a->range[1] = a->range[0];
    if (ex == CLI_EXIT_OK && dots)
        ex = sw_count(opt, dots + 2, strlen(dots + 2), &a->range[1]);
    if (ex == CLI_EXIT_OK && a->range[0] > a->range[1]) {
        cli_usage_error("sweep: -p %s: the range is reversed (%u > %u); write %u..%u", opt,
                        a->range[0], a->range[1], a->range[1], a->range[0]);
        return CLI_EXIT_USAGE;
    }
    a->range_set = true;
    return ex;
}

/* The class names joined, "dsp, host". */
static void sw_class_list(const pm_graph *g, char *buf, size_t n)
{
    size_t k = 0;
    buf[0] = '\0';
    for (uint32_t c = 0; c < g->platform.nclasses && k < n; c++) {
        int w = snprintf(buf + k, n - k, "%s%s", c ? ", " : "", g->platform.class_names[c]);
        k += w > 0 ? (size_t)w : 0;
    }
}

/* -p CLASS=...: the class exists on a platform with classes; plain -p on
 * such a platform is refused, saying how to vary a class. */
static int sw_class(const pm_graph *g, const char *file, sw_args *a)
{
    char list[256];
    sw_class_list(g, list, sizeof list);
    if (!a->class_name) {
        if (!g->platform.classes_named)
            return CLI_EXIT_OK;
        cli_usage_error("sweep: -p %s: %s declares core classes (%s); vary one with "
                        "-p CLASS=A..B, e.g. -p %s=1..4", a->procs, file, list,
                        g->platform.class_names[0]);
        return CLI_EXIT_USAGE;
    }
    if (!g->platform.classes_named) {
        cli_usage_error("sweep: -p %s: %s has identical cores, no classes; use -p A..B",
                        a->procs, file);
        return CLI_EXIT_USAGE;
    }
    uint32_t k = pm_graph_find_class(g, a->class_name, a->class_len);
    if (k == PM_NONE) {
        uint32_t near = pm_graph_suggest_class(g, a->class_name, a->class_len);
        if (near != PM_NONE)
            cli_usage_error("sweep: -p %s: no core class '%.*s' in %s (did you mean '%s'?)",
                            a->procs, (int)a->class_len, a->class_name, file,
                            g->platform.class_names[near]);
        else
            cli_usage_error("sweep: -p %s: no core class '%.*s' in %s (classes: %s)", a->procs,
                            (int)a->class_len, a->class_name, file, list);
        return CLI_EXIT_USAGE;
    }
    a->by_class = true;
    a->vary_class = k;
    return CLI_EXIT_OK;
}

/* Smallest count of class k that its pinned nodes allow (1 without). */
static uint32_t sw_class_need(const pm_graph *g, uint32_t k, uint32_t *node)
{
    uint32_t first = 0, need = 1;
    *node = PM_NONE;
    for (uint32_t c = 0; c < k; c++)
        first += g->platform.class_count[c];
    for (uint32_t v = 0; v < g->nnodes; v++) {
        uint32_t pin = g->nodes[v].pin_core;
        if (pin != PM_NONE && pin >= first && pin < first + g->platform.class_count[k] &&
            pin - first + 1 > need) {
            need = pin - first + 1;
            *node = v;
        }
    }
    return need;
}

/* The smallest count the pins allow, and the node that sets it. */
static uint32_t sw_need(const pm_graph *g, const sw_args *a, uint32_t *node)
{
    if (a->by_class)
        return sw_class_need(g, a->vary_class, node);
    *node = sw_pinned_node(g);
    return pm_sweep_min_procs(g);
}

/* Check -p against the scenario: at least what the pins need, not too
 * many points, at most one core per node (with a warning). */
static int sw_check_range(const pm_graph *g, const char *file, sw_args *a)
{
    uint32_t v, need = sw_need(g, a, &v), cap = g->nnodes > need ? g->nnodes : need;
    if (a->range[0] < need) {
        cli_usage_error("sweep: -p %s: node '%s' is pinned to core %u; start at %u", a->procs,
                        pm_graph_node_name(g, v), g->nodes[v].pin_core, need);
        return CLI_EXIT_USAGE;
    }
    if (a->range[1] - a->range[0] >= PM_SWEEP_MAX_POINTS) {
        cli_usage_error("sweep: -p %s: at most %d core counts per sweep", a->procs,
                        PM_SWEEP_MAX_POINTS);
        return CLI_EXIT_USAGE;
    }
    if (a->range[1] > cap) {
        cli_warning("sweep: %s has %u nodes; more cores would idle: sweeping %u..%u", file,
                    g->nnodes, a->range[0] < cap ? a->range[0] : cap, cap);
        a->range[1] = cap;
        if (a->range[0] > cap)
            a->range[0] = cap;
    }
    return CLI_EXIT_OK;
}

int sw_range(const pm_graph *g, const char *file, sw_args *a)
{
    int ex = a->range_set ? sw_class(g, file, a) : CLI_EXIT_OK;
    if (ex != CLI_EXIT_OK || a->range_set)
        return ex == CLI_EXIT_OK ? sw_check_range(g, file, a) : ex;
    if (g->platform.classes_named) {
        a->range[0] = a->range[1] = g->platform.ncores;
        return CLI_EXIT_OK;
    }
    uint32_t v, need = sw_need(g, a, &v), cap = g->nnodes > need ? g->nnodes : need;
    a->range[0] = need;
    a->range[1] = SW_DEFAULT_TO < cap ? SW_DEFAULT_TO : cap;
    if (a->range[1] < need)
        a->range[1] = need;
    return CLI_EXIT_OK;
}

