/*
 * cli.c - option parsing, error printing and scenario loading shared by
 * every command of the pacemap program.
 */
#include "cli.h"

#include "pacemap/bound.h"
#include "pacemap/json.h"
#include "pacemap/map.h"
#include "pacemap/outfile.h"
#include "pacemap/reader.h"
#include "pacemap/refine.h"
#include "pacemap/sched.h"
#include "pacemap/sdf.h"

#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

const char cli_caution[] =
    "Caution: these are model results. Before relying on them in a product "
    "with hard real-time duties that can harm people, validate on the target "
    "hardware under your field's safety process and local regulations.";

void cli_error(const pm_diag *d)
{
    fprintf(stderr, "%s:%u:%u: error: %s\n", d->file[0] ? d->file : "pacemap",
            d->line, d->col, d->msg);
}

void cli_usage_error(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fputs("pacemap: error: ", stderr);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
}

void cli_warning(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fputs("pacemap: warning: ", stderr);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
}

int cli_exit_for(int err)
{
    if (err == PM_OK)
        return CLI_EXIT_OK;
    return err == PM_EINVAL ? CLI_EXIT_USAGE : CLI_EXIT_INPUT;
}

static void cli_help(const cli_cmd *cmd)
{
    printf("usage: pacemap %s %s\n\n%s\n\noptions:\n", cmd->name, cmd->synopsis,
           cmd->summary);
    for (const cli_opt *o = cmd->opts; o && o->name; o++) {
        char left[64];
        snprintf(left, sizeof left, "%s%s%s%s%s", o->name, o->alias ? ", " : "",
                 o->alias ? o->alias : "", o->metavar ? " " : "",
                 o->metavar ? o->metavar : "");
        printf("  %-26s %s\n", left, o->help);
    }
    printf("  %-26s %s\n", "-h, --help", "show this help");
}

static bool cli_parse_u32(const char *s, uint32_t *out)
{
    if (!s || *s < '0' || *s > '9')
        return false;
    errno = 0;
    char *end;
    unsigned long long v = strtoull(s, &end, 10);
    if (errno || *end || v > UINT32_MAX)
        return false;
    *out = (uint32_t)v;
    return true;
}

static bool cli_parse_range(const char *s, uint32_t r[2])
{
    const char *dots = strstr(s, "..");
    if (!dots) {
        bool ok = cli_parse_u32(s, &r[0]);
        r[1] = r[0];
        return ok && r[0] >= 1;
    }
    char first[32];
    size_t n = (size_t)(dots - s);
    if (n == 0 || n >= sizeof first)
        return false;
    memcpy(first, s, n);
    first[n] = '\0';
    return cli_parse_u32(first, &r[0]) && cli_parse_u32(dots + 2, &r[1]) &&
           r[0] >= 1 && r[0] <= r[1];
}

static const cli_opt *cli_find(const cli_cmd *cmd, const char *arg)
{
    for (const cli_opt *o = cmd->opts; o && o->name; o++)
        if (strcmp(o->name, arg) == 0 || (o->alias && strcmp(o->alias, arg) == 0))
            return o;
    return NULL;
}

/* Store one option's value; false when the value is malformed. */
static bool cli_store(const cli_opt *o, const char *val)
{
    switch (o->kind) {
    case CLI_FLAG: *(bool *)o->dest = true; return true;
    case CLI_STRING: *(const char **)o->dest = val; return true;
    case CLI_U32: return cli_parse_u32(val, (uint32_t *)o->dest);
    case CLI_RANGE: return cli_parse_range(val, (uint32_t *)o->dest);
    }
    return false;
}

int cli_parse(const cli_cmd *cmd, int argc, char **argv, const char **file)
{
    *file = NULL;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (strcmp(a, "-h") == 0 || strcmp(a, "--help") == 0) {
            cli_help(cmd);
            return CLI_EXIT_OK;
        }
        if (a[0] != '-' || a[1] == '\0') {
            if (*file) {
                cli_usage_error("%s: one scenario file only (got '%s' and '%s')",
                                cmd->name, *file, a);
                return CLI_EXIT_USAGE;
            }
            *file = a;
            continue;
        }
        const cli_opt *o = cli_find(cmd, a);
        if (!o) {
            cli_usage_error("%s: unknown option '%s' (see 'pacemap %s -h')", cmd->name,
                            a, cmd->name);
            return CLI_EXIT_USAGE;
        }
        const char *val = NULL;
        if (o->kind != CLI_FLAG) {
            if (i + 1 >= argc) {
                cli_usage_error("%s: option '%s' needs a value", cmd->name, a);
                return CLI_EXIT_USAGE;
            }
            val = argv[++i];
        }
        if (!cli_store(o, val)) {
            cli_usage_error("%s: bad value '%s' for option '%s'", cmd->name, val, a);
            return CLI_EXIT_USAGE;
        }
        if (o->seen)
            *o->seen = true;
    }
    if (!*file) {
        cli_usage_error("%s: no scenario file given (usage: pacemap %s %s)", cmd->name,
                        cmd->name, cmd->synopsis);
        return CLI_EXIT_USAGE;
    }
    return -1;
}

/* The most cores a scenario's procs line may declare (docs/format.md). */
#define CLI_MAX_PROCS 4096u

/* Apply -p to a freshly read scenario. */
static int cli_apply_procs(pm_graph *g, const char *file, bool procs_set, uint32_t procs)
{
    if (!procs_set)
        return CLI_EXIT_OK;
    if (procs == 0 || procs > CLI_MAX_PROCS) {
        cli_usage_error("-p must be from 1 to %u", CLI_MAX_PROCS);
        return CLI_EXIT_USAGE;
    }
    if (g->platform.classes_named) {
        cli_usage_error("-p %u: %s declares core classes; edit its procs line instead",
                        procs, file);
        return CLI_EXIT_USAGE;
    }
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_graph_set_procs_override(g, procs, &d);
    if (rc != PM_OK) {
        cli_error(&d);
        return cli_exit_for(rc);
    }
    return CLI_EXIT_OK;
}

void cli_scenario_free(cli_scenario *s)
{
    if (s->graph != s->source)
        pm_graph_destroy(s->graph);
    pm_graph_destroy(s->source);
    free(s->rep);
    free(s->origin);
    memset(s, 0, sizeof *s);
}

/* Repetition vector, one-iteration check and expansion of a multirate
 * scenario; a single-rate one is used as it is. */
static int cli_expand(cli_scenario *s)
{
    /* a single-rate scenario is its own expansion: no repetition vector to
     * solve (it would cost seconds on a graph of millions of edges) */
    if (pm_graph_is_single_rate(s->source)) {
        s->graph = s->source;
        return CLI_EXIT_OK;
    }
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_sdf_repetition(s->source, &s->rep, &d);
    if (rc == PM_OK)
        rc = pm_sdf_check_iteration(s->source, s->rep, &d);
    if (rc == PM_OK)
        rc = pm_sdf_expand(s->source, s->rep, &s->graph, &s->origin, &d);
    if (rc != PM_OK) {
        cli_error(&d);
        return cli_exit_for(rc);
    }
    s->multirate = true;
    return CLI_EXIT_OK;
}

int cli_load_scenario(const char *file, bool procs_set, uint32_t procs, cli_scenario *out)
{
    memset(out, 0, sizeof *out);
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_scenario_read_file(file, &out->source, &d);
    if (rc != PM_OK) {
        cli_error(&d);
        return cli_exit_for(rc);
    }
    int status = cli_apply_procs(out->source, file, procs_set, procs);
    if (status == CLI_EXIT_OK)
        status = cli_expand(out);
    if (status != CLI_EXIT_OK)
        cli_scenario_free(out);
    return status;
}

int cli_load(const char *file, bool procs_set, uint32_t procs, pm_graph **out)
{
    cli_scenario s;
    *out = NULL;
    int status = cli_load_scenario(file, procs_set, procs, &s);
    if (status != CLI_EXIT_OK)
        return status;
    *out = s.graph;
    if (s.graph != s.source)
        pm_graph_destroy(s.source);
    free(s.rep);
    free(s.origin);
    return CLI_EXIT_OK;
}

int cli_map_read(const cli_scenario *s, const char *path, pm_map **out, pm_diag *diag)
{
    pm_map *m = NULL;
    *out = NULL;
    int rc = pm_map_read_file(path, s->source, &m, diag);
    if (rc == PM_OK && s->multirate) {
        pm_map *xm = NULL;
        rc = pm_sdf_expand_map(s->source, s->rep, m, &xm, diag);
        pm_map_destroy(m);
        m = xm;
    }
    if (rc == PM_OK)
        *out = m;
    return rc;
}

int cli_read_map(const cli_scenario *s, const char *path, pm_map **out)
{
    pm_diag d;
    pm_diag_clear(&d);
    int rc = cli_map_read(s, path, out, &d);
    if (rc != PM_OK) {
        cli_error(&d);
        return cli_exit_for(rc);
    }
    return CLI_EXIT_OK;
}

typedef struct cli_node_place {
    uint32_t node, core;
    int64_t first_start; /* earliest start of any of its firings */
} cli_node_place;

static int cli_place_cmp(const void *a, const void *b)
{
    const cli_node_place *x = a, *y = b;
    if (x->core != y->core)
        return x->core < y->core ? -1 : 1;
    if (x->first_start != y->first_start)
        return x->first_start < y->first_start ? -1 : 1;
    return (x->node > y->node) - (x->node < y->node);
}

/* Where each scenario node goes: the core that ran most of its firings'
 * cycles in the schedule of the expansion (ties: the lower core), so the
 * heavy part of a node stays where the scheduler balanced it. */
static void cli_place_nodes(const cli_scenario *s, const pm_schedule *sc, int64_t *work,
                            cli_node_place *place)
{
    uint32_t ncores = sc->ncores, x = 0;
    for (uint32_t v = 0; v < s->source->nnodes; v++) {
        uint32_t first = x;
        place[v] = (cli_node_place){ v, 0, INT64_MAX };
        for (; x < s->graph->nnodes && s->origin[x] == v; x++) {
            const pm_slot *sl = &sc->slots[x];
            work[sl->core] += sl->end - sl->start + 1; /* +1: zero-cycle firings count */
            if (sl->start < place[v].first_start)
                place[v].first_start = sl->start;
        }
        for (uint32_t c = 1; c < ncores; c++)
            if (work[c] > work[place[v].core])
                place[v].core = c;
        for (uint32_t i = first; i < x; i++)
            work[sc->slots[i].core] = 0;
    }
}

/* The map of the scenario's nodes that schedule sc of the expansion
 * implies; the nodes of a core run in the order of their earliest firing. */
static int cli_nodes_from_firings(const cli_scenario *s, const pm_schedule *sc, pm_map **out)
{
    uint32_t n = s->source->nnodes, ncores = sc->ncores;
    cli_node_place *place = malloc(((size_t)n + 1) * sizeof *place);
    int64_t *work = calloc((size_t)ncores + 1, sizeof *work);
    uint32_t *order = malloc(((size_t)n + 1) * sizeof *order);
    uint32_t *counts = calloc((size_t)ncores + 1, sizeof *counts);
    const uint32_t **lists = calloc((size_t)ncores + 1, sizeof *lists);
    int rc = place && work && order && counts && lists ? PM_OK : PM_ENOMEM;
    if (rc == PM_OK) {
        cli_place_nodes(s, sc, work, place);
        qsort(place, n, sizeof *place, cli_place_cmp);
        for (uint32_t i = 0; i < n; i++) {
            order[i] = place[i].node;
            if (counts[place[i].core]++ == 0)
                lists[place[i].core] = &order[i];
        }
        rc = pm_map_create(ncores, n, lists, counts, out);
    }
    free(place);
    free(work);
    free(order);
    free(counts);
    free(lists);
    return rc;
}

/* A map of the expansion that keeps every firing of a node on one core. */
static int cli_firings_together(const cli_scenario *s, const pm_schedule *sc, pm_map **m,
                                pm_diag *diag)
{
    pm_map *nodes = NULL, *firings = NULL;
    int rc = cli_nodes_from_firings(s, sc, &nodes);
    if (rc == PM_OK)
        rc = pm_sdf_expand_map(s->source, s->rep, nodes, &firings, diag);
    pm_map_destroy(nodes);
    if (rc == PM_OK) {
        pm_map_destroy(*m);
        *m = firings;
    }
    return rc;
}

/* Replace map *m (timed by *sc) by one with a lower simulated period when
 * the local search finds one, and time it again. */
static int cli_refine(const cli_scenario *s, pm_schedule **sc, pm_map **m, pm_diag *diag)
{
    pm_refine_opts ro = { 0 };
    if (s->multirate) {
        ro.source = s->source;
        ro.rep = s->rep;
        ro.origin = s->origin;
    }
    pm_map *better = NULL;
    int improved = 0;
    int rc = pm_refine_map(s->graph, *m, *sc, &ro, &better, &improved, diag);
    if (rc == PM_OK && improved) {
        pm_map_destroy(*m);
        *m = better;
        pm_schedule_destroy(*sc);
        *sc = NULL;
        return pm_sched_from_map(s->graph, *m, sc, diag);
    }
    pm_map_destroy(better);
    return rc;
}

int cli_schedule(const cli_scenario *s, const pm_sched_opts *opts, bool refine,
                 pm_schedule **sched, pm_map **map, pm_diag *diag)
{
    pm_sched_opts none = { 0 };
    pm_schedule *sc = NULL;
    pm_map *m = NULL;
    int rc = pm_sched_list(s->graph, opts ? opts : &none, &sc, &m, diag);
    if (rc == PM_OK && s->multirate) {
        rc = cli_firings_together(s, sc, &m, diag);
        pm_schedule_destroy(sc);
        sc = NULL;
        if (rc == PM_OK)
            rc = pm_sched_from_map(s->graph, m, &sc, diag);
    }
    if (rc == PM_OK && refine)
        rc = cli_refine(s, &sc, &m, diag);
    if (rc != PM_OK) {
        pm_schedule_destroy(sc);
        pm_map_destroy(m);
        return rc;
    }
    if (sched)
        *sched = sc;
    else
        pm_schedule_destroy(sc);
    *map = m;
    return PM_OK;
}

int cli_write_map(const cli_scenario *s, const pm_map *m, FILE *out)
{
    if (!s->multirate)
        return pm_map_write(m, s->graph, out);
    pm_map *nodes = NULL;
    int rc = pm_sdf_collapse_map(s->source, s->rep, m, &nodes, NULL);
    if (rc == PM_OK)
        rc = pm_map_write(nodes, s->source, out);
    pm_map_destroy(nodes);
    return rc;
}

int cli_write_file(const char *path, cli_writer write, const void *ctx)
{
    pm_outfile f;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_outfile_open(&f, path, &d);
    if (rc == PM_OK) {
        rc = write(ctx, f.fp);
        if (rc == PM_OK)
            rc = pm_outfile_commit(&f, &d);
        else
            pm_outfile_abort(&f);
    }
    if (rc != PM_OK) {
        if (!d.msg[0])
            pm_diag_set(&d, path, 0, 0, "cannot write (%s)", pm_strerror(rc));
        cli_error(&d);
    }
    return rc;
}

void cli_json_loop(pm_json *j, const pm_graph *g, const pm_loop *l)
{
    pm_json_object_begin(j);
    pm_json_key(j, "nodes");
    pm_json_array_begin(j);
    for (uint32_t i = 0; i < l->len; i++)
        pm_json_string(j, pm_graph_node_name(g, l->nodes[i]));
    pm_json_array_end(j);
    pm_json_key(j, "cycles");
    pm_json_int(j, l->cycles);
    pm_json_key(j, "delays");
    pm_json_int(j, l->delays);
    pm_json_object_end(j);
}
