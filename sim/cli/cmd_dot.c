/*
 * cmd_dot.c - the 'dot' command: the scenario's graph as Graphviz DOT text,
 * with the loops that set the iteration bound drawn dark red and thick.
 *
 * Nodes show their name, execution time (per class when the scenario gives
 * classes), pin and real-core work; edges show delays ("2D"), words per
 * token when not 1 ("4w") and multirate rates at their ends.  Every loop
 * that attains the iteration bound is drawn dark red and thick; the worst
 * loop of each other strongly connected part is drawn blue and dashed, so
 * the next bottleneck is visible too (colours: pacemap/palette.h, told
 * apart by lightness and line style as well as hue).  The graph label
 * states the bound and serves as the legend.
 *
 * It only writes text: laying the graph out is left to Graphviz.  A loop
 * without delay is an input error (exit 1), as for 'bound'.  A multirate
 * graph is drawn with its own nodes and rates; the bound and the loops
 * marked are those of its expansion, each firing drawn on its node.
 */
#include "cli.h"

#include "pacemap/bound.h"
#include "pacemap/json.h"
#include "pacemap/palette.h"
#include "pacemap/rational.h"

#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define DOT_MAX_OTHER_PARTS 8 /* dashed loops drawn besides the critical ones */
#define DOT_MAX_PATH 12        /* loop nodes named in the caption */

enum dot_mark { DOT_PLAIN = 0, DOT_NEXT = 1, DOT_CRITICAL = 2 };

/* What the drawing needs besides the graph. */
typedef struct dot_view {
    const pm_graph *g;
    const pm_bound *b;          /* NULL when no bound could be computed */
    const char *no_bound_why;   /* reason shown when b is NULL */
    unsigned char *node_mark;   /* enum dot_mark per node */
    unsigned char *edge_mark;   /* enum dot_mark per edge */
} dot_view;

/* Write s for use inside a DOT double-quoted string: quotes and
 * backslashes escaped (a bare backslash would start a DOT escape such as
 * \N), control characters turned into spaces. */
static void dot_text(FILE *f, const char *s)
{
    for (; *s; s++) {
        unsigned char c = (unsigned char)*s;
        if (c == '"' || c == '\\')
            fputc('\\', f);
        fputc(c < 0x20 ? ' ' : c, f);
    }
}

static void dot_mark_loop(dot_view *v, const pm_loop *l, unsigned char mark)
{
    for (uint32_t i = 0; i < l->len; i++) {
        if (v->node_mark[l->nodes[i]] < mark)
            v->node_mark[l->nodes[i]] = mark;
        if (l->edges[i] != PM_NONE && v->edge_mark[l->edges[i]] < mark)
            v->edge_mark[l->edges[i]] = mark;
    }
}

static void dot_mark_loops(dot_view *v)
{
    const pm_bound *b = v->b;
    if (!b || !b->has_loop)
        return;
    for (uint32_t i = 0; i < b->ncritical; i++)
        dot_mark_loop(v, &b->critical[i], DOT_CRITICAL);
    /* parts are worst first: those attaining the bound are critical too */
    for (uint32_t i = 0; i < b->nparts && i <= DOT_MAX_OTHER_PARTS; i++) {
        bool crit = pm_rat_cmp(b->parts[i].bound, b->iteration_bound) == 0;
        dot_mark_loop(v, &b->parts[i].worst, crit ? DOT_CRITICAL : DOT_NEXT);
    }
}

/* "40 cycles" or "dsp:40 host:95" (classes that cannot run it left out). */
static void dot_node_cycles(FILE *f, const pm_graph *g, uint32_t v)
{
    const pm_node *n = &g->nodes[v];
    if (n->class_cycles == PM_NONE) {
        fprintf(f, "%" PRId64 " cycles", n->cycles);
        return;
    }
    const char *sep = "";
    for (uint32_t c = 0; c < g->platform.nclasses; c++) {
        int64_t t = pm_graph_cycles_on(g, v, c);
        if (t < 0)
            continue;
        fputs(sep, f);
        dot_text(f, g->platform.class_names[c]);
        fprintf(f, ":%" PRId64, t);
        sep = " ";
    }
}

static void dot_node_extras(FILE *f, const pm_graph *g, const pm_node *n)
{
    static const char *const work[] = { "spin", "fir", "biquad", "fft" };
    if (n->pin_core != PM_NONE)
        fprintf(f, "\\npin: core %u", n->pin_core);
    if (n->pin_class != PM_NONE && n->pin_class < g->platform.nclasses) {
        fputs("\\npin: ", f);
        dot_text(f, g->platform.class_names[n->pin_class]);
    }
    if (n->work != PM_WORK_SPIN && (unsigned)n->work < 4)
        fprintf(f, "\\nwork: %s:%u", work[n->work], n->work_param);
}

static void dot_node(FILE *f, const dot_view *v, uint32_t id)
{
    const pm_graph *g = v->g;
    const pm_node *n = &g->nodes[id];
    fputs("  \"", f);
    dot_text(f, pm_graph_node_name(g, id));
    fputs("\" [label=\"", f);
    dot_text(f, pm_graph_node_name(g, id));
    fputs("\\n", f);
    dot_node_cycles(f, g, id);
    dot_node_extras(f, g, n);
    fputc('"', f);
    if (n->pin_core != PM_NONE || n->pin_class != PM_NONE)
        fputs(", peripheries=2", f);
    if (v->node_mark[id] == DOT_CRITICAL)
        fprintf(f, ", color=\"%s\", penwidth=2.5, fillcolor=\"%s\"", pm_palette_critical,
                pm_palette_critical_fill);
    else if (v->node_mark[id] == DOT_NEXT)
        fprintf(f, ", color=\"%s\", penwidth=2, style=\"rounded,filled,dashed\", "
                "fillcolor=\"%s\"", pm_palette_near, pm_palette_near_fill);
    fputs("];\n", f);
}

/* The edge's label: "2D", "16w", "2D 16w"; empty for the defaults. */
static void dot_edge_label(FILE *f, const pm_edge *e)
{
    const char *sep = "";
    if (e->delay > 0) {
        fprintf(f, "%" PRId64 "D", e->delay);
        sep = " ";
    }
    if (e->words != 1)
        fprintf(f, "%s%" PRId64 "w", sep, e->words);
}

static void dot_edge(FILE *f, const dot_view *v, uint32_t id)
{
    const pm_graph *g = v->g;
    const pm_edge *e = &g->edges[id];
    fputs("  \"", f);
    dot_text(f, pm_graph_node_name(g, e->src));
    fputs("\" -> \"", f);
    dot_text(f, pm_graph_node_name(g, e->dst));
    fputs("\" [label=\"", f);
    dot_edge_label(f, e);
    fputc('"', f);
    if (e->produce != 1 || e->consume != 1)
        fprintf(f, ", taillabel=\"%" PRId64 "\", headlabel=\"%" PRId64 "\"", e->produce,
                e->consume);
    if (v->edge_mark[id] == DOT_CRITICAL)
        fprintf(f, ", color=\"%s\", fontcolor=\"%s\", penwidth=3", pm_palette_critical,
                pm_palette_critical);
    else if (v->edge_mark[id] == DOT_NEXT)
        fprintf(f, ", color=\"%s\", fontcolor=\"%s\", penwidth=2, style=dashed",
                pm_palette_near, pm_palette_near);
    fputs("];\n", f);
}

/* "a -> b -> c -> a" for a loop, escaped for a DOT label; a long loop is
 * cut to its first DOT_MAX_PATH nodes so the caption stays readable. */
static void dot_loop_path(FILE *f, const pm_graph *g, const pm_loop *l)
{
    for (uint32_t i = 0; i < l->len && i < DOT_MAX_PATH; i++) {
        dot_text(f, pm_graph_node_name(g, l->nodes[i]));
        fputs(" -> ", f);
    }
    if (l->len > DOT_MAX_PATH)
        fprintf(f, "... (%u nodes in all) -> ", l->len);
    dot_text(f, pm_graph_node_name(g, l->nodes[0]));
}

static void dot_rat(FILE *f, pm_rat r)
{
    if (r.den == 1)
        fprintf(f, "%" PRId64, r.num);
    else
        fprintf(f, "%" PRId64 "/%" PRId64 " = %.3f", r.num, r.den, pm_rat_to_double(r));
}

static void dot_loop_line(FILE *f, const pm_graph *g, const pm_loop *l)
{
    fputs("\\n", f);
    dot_loop_path(f, g, l);
    fprintf(f, "  (%" PRId64 " cycles / %" PRId64 " delay%s)", l->cycles, l->delays,
            l->delays == 1 ? "" : "s");
}

/* The worst loop of each part below the bound: the next bottlenecks. */
static void dot_label_next(FILE *f, const dot_view *v)
{
    const pm_bound *b = v->b;
    bool first = true;
    for (uint32_t i = 0; i < b->nparts && i <= DOT_MAX_OTHER_PARTS; i++) {
        if (pm_rat_cmp(b->parts[i].bound, b->iteration_bound) == 0)
            continue;
        if (first)
            fputs("\\nnext loops behind it (blue, dashed):", f);
        first = false;
        dot_loop_line(f, v->g, &b->parts[i].worst);
    }
    if (b->nparts_total > b->nparts)
        fprintf(f, "\\n(%u more parts with loops not listed)", b->nparts_total - b->nparts);
}

/* The bound lines of the graph label. */
static void dot_label_bound(FILE *f, const dot_view *v)
{
    const pm_bound *b = v->b;
    if (!b) {
        fputs("iteration bound not computed: ", f);
        dot_text(f, v->no_bound_why);
        return;
    }
    if (!b->has_loop) {
        fputs("no loop: no iteration bound (the floor comes from the cores)", f);
        return;
    }
    fputs("iteration bound ", f);
    dot_rat(f, b->iteration_bound);
    fputs(" cycles per iteration (dark red, thick)", f);
    for (uint32_t i = 0; i < b->ncritical; i++)
        dot_loop_line(f, v->g, &b->critical[i]);
    if (b->critical_truncated)
        fputs("\\n(more critical loops not listed)", f);
    dot_label_next(f, v);
}

static void dot_write(FILE *f, const dot_view *v)
{
    const pm_graph *g = v->g;
    fputs("digraph \"pacemap\" {\n"
          "  graph [rankdir=LR, labelloc=t, fontname=\"Helvetica\", label=\"", f);
    if (g->platform.title) {
        dot_text(f, g->platform.title);
        fputs("\\n", f);
    }
    dot_label_bound(f, v);
    fputs("\"];\n"
          "  node [shape=box, style=\"rounded,filled\", fillcolor=white, "
          "fontname=\"Helvetica\"];\n"
          "  edge [fontname=\"Helvetica\", fontsize=10];\n", f);
    for (uint32_t id = 0; id < g->nnodes; id++)
        dot_node(f, v, id);
    for (uint32_t id = 0; id < g->nedges; id++)
        dot_edge(f, v, id);
    fputs("}\n", f);
}

/* ---- JSON -------------------------------------------------------------- */

static void dot_json_loops(pm_json *j, const pm_graph *g, const pm_bound *b)
{
    pm_json_key(j, "critical_loops");
    pm_json_array_begin(j);
    for (uint32_t i = 0; b && i < b->ncritical; i++)
        cli_json_loop(j, g, &b->critical[i]);
    pm_json_array_end(j);
}

/* {"file", "iteration_bound", "critical_loops", "dot"}; the DOT text is
 * built in memory first.  Returns an exit status. */
static int dot_print_json(const char *file, const dot_view *v)
{
    char *text = NULL;
    size_t len = 0;
    FILE *mem = open_memstream(&text, &len);
    if (!mem) {
        cli_usage_error("dot: out of memory");
        return CLI_EXIT_INPUT;
    }
    dot_write(mem, v);
    if (fclose(mem) != 0 || !text) {
        free(text);
        cli_usage_error("dot: out of memory");
        return CLI_EXIT_INPUT;
    }
    pm_json j;
    pm_json_init(&j, stdout, 2);
    pm_json_object_begin(&j);
    pm_json_key(&j, "file");
    pm_json_string(&j, file);
    pm_json_key(&j, "iteration_bound");
    if (v->b && v->b->has_loop)
        pm_json_rat(&j, v->b->iteration_bound);
    else
        pm_json_null(&j);
    dot_json_loops(&j, v->g, v->b);
    pm_json_key(&j, "dot");
    pm_json_string(&j, text);
    pm_json_object_end(&j);
    pm_json_finish(&j);
    free(text);
    return CLI_EXIT_OK;
}

/* ---- the command ------------------------------------------------------- */

/* Compute the bound into *b; *have is false when the graph is valid but
 * the bound cannot be computed for it (multirate, reason in d).  Errors are
 * printed; returns an exit status. */
static int dot_bound(const pm_graph *g, pm_bound *b, bool *have, pm_diag *d)
{
    /* the critical loops and the worst loop of the parts drawn dashed */
    const pm_bound_opts opts = { .max_critical = 0, .max_parts = DOT_MAX_OTHER_PARTS + 1 };
    int rc = pm_bound_compute(g, &opts, b, d);
    *have = rc == PM_OK;
    if (rc == PM_OK || rc == PM_EUNSUPPORTED)
        return CLI_EXIT_OK;
    if (rc == PM_ENOMEM)
        cli_usage_error("dot: out of memory");
    else
        cli_error(d);
    return CLI_EXIT_INPUT;
}

/* The first edge of the scenario from node u to node v (PM_NONE if none). */
static uint32_t dot_source_edge(const pm_graph *g, uint32_t u, uint32_t v)
{
    for (uint32_t i = g->out_off[u]; i < g->out_off[u + 1]; i++)
        if (g->edges[g->out_edge[i]].dst == v)
            return g->out_edge[i];
    return PM_NONE;
}

/* A multirate scenario's bound is computed on its expansion; draw its
 * loops on the scenario's own nodes and edges (firings of one node fold
 * onto that node). */
static void dot_fold_loop(const pm_plan *s, pm_loop *l)
{
    for (uint32_t i = 0; i < l->len; i++) {
        uint32_t u = s->origin[l->nodes[i]];
        uint32_t v = s->origin[l->nodes[(i + 1) % l->len]];
        l->edges[i] = dot_source_edge(s->source, u, v);
    }
    for (uint32_t i = 0; i < l->len; i++)
        l->nodes[i] = s->origin[l->nodes[i]];
}

static void dot_fold_bound(const pm_plan *s, pm_bound *b)
{
    for (uint32_t i = 0; i < b->ncritical; i++)
        dot_fold_loop(s, &b->critical[i]);
    for (uint32_t i = 0; i < b->nparts; i++)
        dot_fold_loop(s, &b->parts[i].worst);
}

static int dot_draw(const char *file, const pm_plan *s, bool json)
{
    pm_bound b;
    pm_diag d;
    bool have = false;
    const pm_graph *g = s->source;
    memset(&b, 0, sizeof b);
    pm_diag_clear(&d);
    int st = dot_bound(s->graph, &b, &have, &d);
    if (st != CLI_EXIT_OK)
        return st;
    if (have && s->multirate)
        dot_fold_bound(s, &b);
    dot_view v = { .g = g, .b = have ? &b : NULL, .no_bound_why = d.msg };
    v.node_mark = calloc((size_t)g->nnodes + 1, 1);
    v.edge_mark = calloc((size_t)g->nedges + 1, 1);
    if (!v.node_mark || !v.edge_mark) {
        cli_usage_error("dot: out of memory");
        st = CLI_EXIT_INPUT;
    } else {
        dot_mark_loops(&v);
        if (json)
            st = dot_print_json(file, &v);
        else
            dot_write(stdout, &v);
    }
    free(v.node_mark);
    free(v.edge_mark);
    if (have)
        pm_bound_free(&b);
    return st;
}

int pm_cmd_dot(int argc, char **argv)
{
    bool json = false;
    const cli_opt opts[] = {
        { "--json", NULL, CLI_FLAG, &json, NULL,
          "the DOT text inside a JSON object, with the bound (docs/schema.json)", NULL },
        { NULL, NULL, CLI_FLAG, NULL, NULL, NULL, NULL },
    };
    const cli_cmd cmd = { "dot", "FILE [--json]",
                          "Write the graph as Graphviz DOT on standard output; loops that "
                          "set the iteration bound are drawn dark red and thick.\n"
                          "Example: pacemap dot FILE | dot -Tsvg -o graph.svg", opts };
    const char *file;
    int st = cli_parse(&cmd, argc, argv, &file);
    if (st >= 0)
        return st;
    pm_plan scn;
    st = cli_load_scenario(file, false, 0, &scn);
    if (st != CLI_EXIT_OK)
        return st;
    st = dot_draw(file, &scn, json);
    pm_plan_free(&scn);
    return st;
}
