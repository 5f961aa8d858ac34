/*
 * plot.h - line plots as SVG: one or more panels stacked vertically over a
 * shared x axis, each with labelled axes, grid lines, a legend and several
 * series (the sweep draws period and floors against the core count in one
 * panel, throughput in another).
 *
 * Series are told apart by colour (a palette safe for colour-blind
 * readers), dash pattern and marker shape together, so the chart also reads
 * in grey.  Output is deterministic: the same plot gives byte-identical
 * files (fixed number formats, no time stamps, C locale assumed).
 *
 * Ownership: the plot and its arrays are the caller's; the writer only
 * reads them.  Thread-safe on distinct streams.
 */
#ifndef PACEMAP_PLOT_H
#define PACEMAP_PLOT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

typedef struct pm_plot_series {
    const char *label;    /* legend text (escaped by the writer) */
    const double *y;      /* npoints values; NAN or infinity leaves a gap */
    bool markers;         /* draw a marker at each point */
    unsigned style;       /* 0: the series' position picks colour, dash and
                             marker; k (1..PM_PLOT_MAX_SERIES): style k, so a
                             quantity keeps its look across charts */
} pm_plot_series;

typedef struct pm_plot_panel {
    const char *ylabel;   /* y axis label, with its unit */
    const pm_plot_series *series;
    size_t nseries;       /* at most PM_PLOT_MAX_SERIES */
} pm_plot_panel;

#define PM_PLOT_MAX_SERIES 8
#define PM_PLOT_MAX_PANELS 4

typedef struct pm_plot {
    const char *title;    /* may be NULL */
    const char *subtitle; /* a second, smaller line; may be NULL */
    const char *xlabel;   /* x axis label, with its unit */
    const double *x;      /* npoints finite values, ascending */
    size_t npoints;
    bool x_integer;       /* ticks only at whole numbers (core counts) */
    const pm_plot_panel *panels;
    size_t npanels;       /* 1 .. PM_PLOT_MAX_PANELS */
    const char *caution;  /* a footnote under the chart, or NULL */
} pm_plot;

/*
 * Write `p` as a standalone SVG 1.1 document.  Each series becomes one
 * <polyline> per run of finite values (the points of the run, in order)
 * plus a marker per finite point when asked; y axes start at 0 and end at
 * a rounded value above the largest finite y of the panel.
 * Errors: PM_EINVAL (no points, no panels, too many series or panels,
 * x not finite or not ascending), PM_EIO (a write failed).
 * Complexity: O(points * series).
 */
int pm_plot_write_svg(const pm_plot *p, FILE *out);

#endif
