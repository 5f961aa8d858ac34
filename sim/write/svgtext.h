/*
 * svgtext.h - how wide SVG text may be, shared by the SVG writers (not
 * part of the public API).  A viewer picks the font, so widths are
 * estimated on the safe side: every character counts 0.62 em (0.68 em
 * bold), wider than the average character of common monospace and sans
 * fonts.  Writers cut or wrap text to what fits with these widths.
 */
#ifndef PACEMAP_SVGTEXT_H
#define PACEMAP_SVGTEXT_H

#include <stddef.h>

#define SVG_EM_REGULAR 0.62
#define SVG_EM_BOLD 0.68

/* Characters of font size `px` (em factor `em`) that fit in `avail` px. */
static inline size_t svg_fit_chars(double avail, double px, double em)
{
    double n = avail / (px * em);
    return n < 1 ? 0 : (size_t)n;
}

#endif
