/*
 * palette.h - the colours of pacemap's pictures (DOT graphs, Gantt charts),
 * designed for this project (docs/guide.md, "Colours").
 *
 * Design rule: every colour that carries meaning differs from its
 * neighbours in CIELAB lightness L* by at least 8, so the pictures read the
 * same for colour-blind readers and in grey print; hue only adds to it.
 * Iteration fills step L* = 92, 84, 76, 68, 60, 52 (chroma 12 to 22, hues
 * 250, 85, 165, 320, 120, 35 degrees): black text keeps a contrast of at
 * least 5:1 on the darkest.  The critical loop is dark (L* 34), the loops
 * behind it mid (L* 58) and drawn dashed as well, both on light fills
 * (L* 95 and 94).  Constant data; thread-safe.
 */
#ifndef PACEMAP_PALETTE_H
#define PACEMAP_PALETTE_H

/* Fills of successive iterations in a Gantt chart, lightest first. */
#define PM_PALETTE_NITER 6
extern const char *const pm_palette_iteration[PM_PALETTE_NITER];
/* CIELAB L* of each iteration fill, for legends and docs. */
extern const int pm_palette_iteration_lightness[PM_PALETTE_NITER];

/* The critical loop: line and fill. */
extern const char pm_palette_critical[];
extern const char pm_palette_critical_fill[];
/* The loops behind it: line (drawn dashed) and fill. */
extern const char pm_palette_near[];
extern const char pm_palette_near_fill[];

#endif
