/*
 * cmd_sweep_internal.h - what the sweep command's text report
 * (cmd_sweep.c) shares with its machine and file outputs
 * (cmd_sweep_out.c).  Internal to the pacemap program.
 */
#ifndef PACEMAP_CMD_SWEEP_INTERNAL_H
#define PACEMAP_CMD_SWEEP_INTERNAL_H

#include <stdio.h>

#include "pacemap/graph.h"
#include "pacemap/sweep.h"

typedef struct sw_report {
    const pm_graph *g;
    const pm_sweep *s;
    const char *file;
} sw_report;

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
