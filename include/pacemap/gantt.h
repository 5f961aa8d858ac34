/*
 * gantt.h - Gantt charts of schedules and simulated runs, as text (for the
 * terminal, at most 100 columns) and as SVG.
 *
 * The chart is described by plain arrays the caller owns: lanes (one per
 * core, plus any extra such as a bus), boxes (a node running on a lane) and
 * arrows (a transfer from one lane to another).  The writers only read them.
 * Output is deterministic: the same chart gives byte-identical files.
 */
#ifndef PACEMAP_GANTT_H
#define PACEMAP_GANTT_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

typedef struct pm_gantt_box {
    uint32_t lane;
    int64_t start, end;   /* cycles; end >= start */
    const char *label;    /* node name (borrowed) */
    uint32_t iteration;   /* shades boxes of successive iterations apart */
} pm_gantt_box;

typedef struct pm_gantt_arrow {
    uint32_t from_lane, to_lane;
    int64_t start, end;   /* leaves the producer's lane at start, arrives at end */
    const char *label;    /* edge label or NULL */
} pm_gantt_arrow;

typedef struct pm_gantt {
    const char *title;            /* may be NULL */
    uint32_t nlanes;
    const char *const *lane_names;/* "core 0", "bus", ... */
    const pm_gantt_box *boxes;
    size_t nboxes;
    const pm_gantt_arrow *arrows;
    size_t narrows;
    uint64_t clock_hz;            /* 0: the time axis is in cycles only */
    const char *caution;          /* a line printed under the chart, or NULL */
} pm_gantt;

/* SVG 1.1 document: one lane per row, boxes labelled, arrows for transfers,
 * a time axis in cycles and, with a clock, in microseconds.  PM_EIO when a
 * write fails. */
int pm_gantt_write_svg(const pm_gantt *chart, FILE *out);

/* The same chart with a dashed vertical mark at each of `marks` (cycles,
 * e.g. the releases of a paced run), labelled by index from 0.  Marks past
 * the chart's span are left out.  PM_EIO when a write fails. */
int pm_gantt_write_svg_marked(const pm_gantt *chart, const int64_t *marks, size_t nmarks,
                              FILE *out);

/* Plain-text chart at most `width` columns wide (width <= 100). */
int pm_gantt_write_text(const pm_gantt *chart, FILE *out, int width);

#endif
