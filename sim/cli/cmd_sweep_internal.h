/*
 * cmd_sweep_internal.h - what the parts of the sweep command share: the
 * command line (cmd_sweep.c), its core counts (cmd_sweep_range.c), the
 * table for text and CSV (cmd_sweep_table.c) and the JSON and SVG outputs
 * (cmd_sweep_out.c).  Internal to the pacemap program.
 */
#ifndef PACEMAP_CMD_SWEEP_INTERNAL_H
#define PACEMAP_CMD_SWEEP_INTERNAL_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "pacemap/graph.h"
#include "pacemap/sweep.h"

typedef struct sw_report {
    const pm_graph *g;
    const pm_sweep *s;
    const char *file;
} sw_report;

#define SW_DEFAULT_TO 16

/* The command line of `pacemap sweep`. */
typedef struct sw_args {
    const char *procs;       /* -p as written */
    uint32_t range[2];
    bool range_set, json, quiet, iterations_set, no_refine, jobs_set;
    const char *class_name;  /* -p CLASS=A..B: the class, class_len bytes */
    size_t class_len;
    bool by_class;
    uint32_t vary_class;
    uint32_t iterations, faster;
    uint32_t jobs;           /* --jobs: threads */
    const char *svg, *csv, *map;
} sw_args;

/* -p [CLASS=]A..B or [CLASS=]N, before the scenario is read: the syntax
 * and the range into a->range.  CLI_EXIT_USAGE (printed) when malformed. */
int sw_parse_procs(sw_args *a);
/* Decide the range of core counts against the scenario (the class of
 * -p CLASS=..., pins, the node count) or, without -p, the default range;
 * a usage error prints and returns CLI_EXIT_USAGE. */
int sw_range(const pm_graph *g, const char *file, sw_args *a);

/* "30", "45/2" style exact text of a rational into buf. */
const char *sw_rat_text(char *buf, size_t n, pm_rat r);

/* --json on stdout (docs/schema.json `sweep`, docs/sweep.md). */
void sw_write_json(const sw_report *r, FILE *out);
/* Shortest "%.Ng" of x that reads back as x; "" for NaN or infinity. */
void sw_shortest(char *buf, size_t n, double x);
/* The table: a header row, then one row per core count; aligned text, or
 * CSV (numbers in their shortest round-trip form, rationals also exact).
 * PM_EIO on failure. */
int sw_write_table(const sw_report *r, FILE *out, bool csv);
/* --csv: sw_write_table's CSV form (ctx: the sw_report). */
int sw_write_csv(const void *ctx, FILE *out);
/* --svg: period and floors, and throughput, against the core count. */
int sw_write_svg(const void *ctx, FILE *out);

#endif
