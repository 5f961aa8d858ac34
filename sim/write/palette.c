/*
 * palette.c - the project's own colours (palette.h states the design rule).
 * Each value was computed from CIELAB L*, C*, h (D65 white, sRGB): the
 * comment beside it gives the three, so the rule can be checked.
 */
#include "pacemap/palette.h"

const char *const pm_palette_iteration[PM_PALETTE_NITER] = {
    "#d4ebfd", /* L* 92, C* 12, h 250: pale sky */
    "#e5cfa8", /* L* 84, C* 22, h  85: sand */
    "#93c6b0", /* L* 76, C* 22, h 165: sage */
    "#b99cbf", /* L* 68, C* 22, h 320: heather */
    "#8a956f", /* L* 60, C* 22, h 120: moss */
    "#a17067", /* L* 52, C* 22, h  35: clay */
};

const int pm_palette_iteration_lightness[PM_PALETTE_NITER] = { 92, 84, 76, 68, 60, 52 };

const char pm_palette_critical[] = "#982327";      /* L* 34, C* 55, h  30 */
const char pm_palette_critical_fill[] = "#feedeb"; /* L* 95, C*  6, h  30 */
const char pm_palette_near[] = "#1f94ce";          /* L* 58, C* 40, h 255 */
const char pm_palette_near_fill[] = "#e6eff7";     /* L* 94, C*  5, h 255 */
