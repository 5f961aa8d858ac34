/*
 * cli.h - shared pieces of the command-line front end (internal to the
 * pacemap program, not part of the library).
 *
 * Each command lives in sim/cli/cmd_<name>.c as `int pm_cmd_<name>(argc, argv)`
 * and returns an exit status.  Options are parsed from a table per command;
 * errors are printed through cli_error() only, one line each.
 */
#ifndef PACEMAP_CLI_H
#define PACEMAP_CLI_H

#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/plan.h"

enum cli_exit {
    CLI_EXIT_OK = 0,
    CLI_EXIT_INPUT = 1, /* the input or the graph is wrong */
    CLI_EXIT_USAGE = 2  /* the command line is wrong */
};

typedef enum cli_opt_kind {
    CLI_FLAG,   /* bool, no value */
    CLI_STRING, /* const char *, the next argument */
    CLI_U32,    /* uint32_t, decimal, >= 1 unless min says otherwise */
    CLI_RANGE   /* uint32_t[2], "A..B" or "N" */
} cli_opt_kind;

typedef struct cli_opt {
    const char *name;  /* "--json", "-p" */
    const char *alias; /* another spelling or NULL, e.g. "--procs" */
    cli_opt_kind kind;
    void *dest;        /* bool*, const char**, uint32_t*, uint32_t[2] */
    bool *seen;        /* set true when given (may be NULL) */
    const char *help;  /* one line for -h */
    const char *metavar; /* "N", "F", "A..B" */
} cli_opt;

typedef struct cli_cmd {
    const char *name;
    const char *synopsis; /* arguments after the command name */
    const char *summary;  /* one line */
    const cli_opt *opts;  /* terminated by an entry with name == NULL */
} cli_cmd;

/* Parse argv (argv[0] is the command name) into the table's destinations.
 * The one positional argument (the scenario file) goes to *file.  Returns
 * -1 to go on, or an exit status to return at once (usage error printed,
 * or help shown for -h/--help). */
int cli_parse(const cli_cmd *cmd, int argc, char **argv, const char **file);

/* The one place that prints an error: "FILE:LINE:COL: error: MSG". */
void cli_error(const pm_diag *d);
/* An error without a place, "pacemap: error: MSG" (usage problems). */
void cli_usage_error(const char *fmt, ...) __attribute__((format(printf, 1, 2)));
/* A warning, "FILE:LINE:COL: warning: MSG" or "pacemap: warning: MSG". */
void cli_warning(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* Exit status for a library error code (input errors 1, misuse 2). */
int cli_exit_for(int err);

/* Read and validate a scenario and make its plan (pm_plan_init: a
 * multirate scenario is expanded), applying `-p procs` when procs_set
 * (identical cores only; pm_plan_set_procs).  Prints the error and returns
 * its exit status on failure (*out zeroed); CLI_EXIT_OK on success, *out
 * then the caller's to pm_plan_free. */
int cli_load_scenario(const char *file, bool procs_set, uint32_t procs, pm_plan *out);

/* Like cli_load_scenario for commands that need only the graph to analyse:
 * *out is that graph (the expansion of a multirate scenario), owned by the
 * caller. */
int cli_load(const char *file, bool procs_set, uint32_t procs, pm_graph **out);

/* pm_plan_map_read (a map file naming the scenario's nodes, as a map of
 * p->graph), printing the error and returning its exit status on failure. */
int cli_read_map(const pm_plan *p, const char *path, pm_map **out);

/* Write an output file whole or not at all (pm_outfile): `write` fills the
 * stream from ctx.  On failure prints the error (nothing is left behind)
 * and returns the library error code. */
typedef int (*cli_writer)(const void *ctx, FILE *out);
int cli_write_file(const char *path, cli_writer write, const void *ctx);

/* A loop as {"nodes": [...], "cycles": N, "delays": N} (docs/schema.json). */
struct pm_json;
struct pm_loop;
void cli_json_loop(struct pm_json *j, const pm_graph *g, const struct pm_loop *l);

struct pm_json;

/* The safety caution of docs/guide.md (section "A caution"), one short paragraph
 * for reports, and its one-line form for --quiet. */
extern const char cli_caution[];
extern const char cli_caution_line[];

/* --quiet (-q), which every command takes: print only the results (no
 * charts, explanations or progress) and the caution in one line.  Set by
 * cli_parse. */
extern bool cli_quiet;

/* Print the caution for a text report: wrapped to `width` columns, or as
 * its one line under --quiet. */
void cli_print_caution(int width);
/* The caution closing a text report: after a blank line, wrapped at 96
 * columns (one line under --quiet, without the blank line). */
void cli_print_caution_block(void);

/* The caution as the key "caution" of a JSON report. */
void cli_json_caution(struct pm_json *j);

/* The plan options of --mapper NAME (NULL: the period-first mapper) and
 * --no-refine (the list scheduler's map as it is) into *po; CLI_EXIT_OK,
 * or CLI_EXIT_USAGE after a message naming command cmd. */
int cli_mapper_choice(const char *cmd, const char *name, bool no_refine, pm_plan_opts *po);

/* The commands. */
int pm_cmd_check(int argc, char **argv);
int pm_cmd_bound(int argc, char **argv);
int pm_cmd_schedule(int argc, char **argv);
int pm_cmd_simulate(int argc, char **argv);
int pm_cmd_run(int argc, char **argv);
int pm_cmd_sweep(int argc, char **argv);
int pm_cmd_dot(int argc, char **argv);

#endif
