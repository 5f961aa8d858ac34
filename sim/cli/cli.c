/*
 * cli.c - option parsing, error printing, scenario loading (the reader,
 * then pm_plan_init) and output files shared by every command of the
 * pacemap program.  Mapping lives in the library (pacemap/plan.h).
 */
#include "cli.h"

#include "pacemap/bound.h"
#include "pacemap/json.h"
#include "pacemap/map.h"
#include "pacemap/outfile.h"
#include "pacemap/reader.h"

#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

const char cli_caution[] =
    "Caution: these are model results. Before relying on them in a product "
    "with hard real-time duties that can harm people, validate on the target "
    "hardware under your field's safety process and local regulations.";

const char cli_caution_line[] =
    "Caution: model results; validate on target hardware (field safety process, "
    "local regulations).";

bool cli_quiet;

void cli_print_caution(int width)
{
    if (cli_quiet) {
        puts(cli_caution_line);
        return;
    }
    const char *s = cli_caution;
    while (*s) {
        int n = (int)strlen(s);
        if (n > width) {
            n = width;
            while (n > 0 && s[n] != ' ')
                n--;
            if (n == 0)
                n = width;
        }
        printf("%.*s\n", n, s);
        s += n;
        while (*s == ' ')
            s++;
    }
}

void cli_print_caution_block(void)
{
    if (!cli_quiet)
        putchar('\n');
    cli_print_caution(96);
}

void cli_json_caution(pm_json *j)
{
    pm_json_key(j, "caution");
    pm_json_string(j, cli_caution);
}

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

static const cli_opt *cli_find(const cli_cmd *cmd, const char *arg);

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
    if (!cli_find(cmd, "--quiet"))
        printf("  %-26s %s\n", "-q, --quiet", "print only the results, the caution in one line");
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
        if (!o && (strcmp(a, "--quiet") == 0 || strcmp(a, "-q") == 0)) {
            cli_quiet = true;
            continue;
        }
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
        if (strcmp(o->name, "--quiet") == 0) /* a command's own --quiet means it too */
            cli_quiet = true;
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

/* Refuse a -p the command line cannot give: out of range, or core
 * classes (their count is the procs line's). */
static int cli_check_procs(const pm_graph *g, const char *file, bool procs_set, uint32_t procs)
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
    return CLI_EXIT_OK;
}

int cli_load_scenario(const char *file, bool procs_set, uint32_t procs, pm_plan *out)
{
    memset(out, 0, sizeof *out);
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_reader_read_file(file, &g, &d);
    if (rc != PM_OK) {
        cli_error(&d);
        return cli_exit_for(rc);
    }
    int status = cli_check_procs(g, file, procs_set, procs);
    if (status != CLI_EXIT_OK) {
        pm_graph_destroy(g);
        return status;
    }
    rc = pm_plan_init(out, g, &d);
    if (rc == PM_OK && procs_set)
        rc = pm_plan_set_procs(out, procs, &d);
    if (rc != PM_OK) {
        cli_error(&d);
        pm_plan_free(out);
        return cli_exit_for(rc);
    }
    return CLI_EXIT_OK;
}

int cli_load(const char *file, bool procs_set, uint32_t procs, pm_graph **out)
{
    pm_plan p;
    *out = NULL;
    int status = cli_load_scenario(file, procs_set, procs, &p);
    if (status != CLI_EXIT_OK)
        return status;
    /* keep the analysed graph, free the rest of the plan */
    *out = p.graph;
    if (p.graph != p.source)
        pm_graph_destroy(p.source);
    free(p.rep);
    free(p.origin);
    return CLI_EXIT_OK;
}

int cli_read_map(const pm_plan *p, const char *path, pm_map **out)
{
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_plan_map_read(p, path, out, &d);
    if (rc != PM_OK) {
        cli_error(&d);
        return cli_exit_for(rc);
    }
    return CLI_EXIT_OK;
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
            pm_diag_set(&d, path, 0, 0, "cannot write (%s)", pm_error_name(rc));
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

int cli_mapper_choice(const char *cmd, const char *name, bool no_refine, pm_plan_opts *po)
{
    memset(po, 0, sizeof *po);
    bool list = name && strcmp(name, "list") == 0;
    if (name && !list && strcmp(name, "period") != 0) {
        cli_usage_error("%s: --mapper takes 'period' or 'list', not '%s'", cmd, name);
        return CLI_EXIT_USAGE;
    }
    if (no_refine && name && !list) {
        cli_usage_error("%s: --no-refine keeps the list scheduler's map; it does not go "
                        "with --mapper period", cmd);
        return CLI_EXIT_USAGE;
    }
    po->mapper = list || no_refine ? PM_PLAN_MAPPER_LIST : PM_PLAN_MAPPER_PERIOD;
    po->refine = list && !no_refine;
    return CLI_EXIT_OK;
}
