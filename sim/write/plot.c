/*
 * plot.c - the SVG line-plot writer (plot.h): panels stacked over a shared
 * x axis, rounded y axes from 0, grid, legend beside each panel, a wrapped
 * footnote.  Every number is written with a fixed format so the bytes only
 * depend on the plot.  What it does not do: log scales, text measurement
 * (labels are assumed to fit the fixed margins; long ones are cut).
 */
#include "pacemap/plot.h"

#include <math.h>
#include <string.h>

#include "pacemap/error.h"
#include "svgtext.h"

#define PL_W 920.0        /* document width */
#define PL_ML 84.0        /* left margin: y tick labels and y label */
#define PL_PW 520.0       /* plot area width */
#define PL_PH 250.0       /* plot area height of one panel */
#define PL_GAP 78.0       /* below a panel: x ticks and x label */
#define PL_HEAD 70.0      /* title and subtitle */
#define PL_LEGEND_X (PL_ML + PL_PW + 24.0)
#define PL_FOOT_CHARS 120 /* footnote line length */

static const char *const pl_colour[PM_PLOT_MAX_SERIES] = {
    "#000000", "#D55E00", "#0072B2", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#666666"};
static const char *const pl_dash[PM_PLOT_MAX_SERIES] = {
    "", "8 4", "2 3", "8 3 2 3", "12 4", "4 4", "1 3", "6 2 2 2"};

typedef struct pl_axis {
    double lo, hi, step; /* data range shown and tick step */
} pl_axis;

typedef struct pl_frame {
    double left, top, width, height;
    pl_axis x, y;
} pl_frame;

/* ---- small writers ------------------------------------------------------ */

static void pl_text_escaped(FILE *f, const char *s, size_t max)
{
    for (size_t i = 0; s && s[i] && i < max; i++) {
        switch (s[i]) {
        case '&': fputs("&amp;", f); break;
        case '<': fputs("&lt;", f); break;
        case '>': fputs("&gt;", f); break;
        case '"': fputs("&quot;", f); break;
        default: fputc(s[i], f); break;
        }
    }
}

/* Text of at most max characters; a longer one is cut and ends in "...". */
static void pl_text(FILE *f, double x, double y, const char *anchor, const char *extra,
                    const char *s, size_t max)
{
    fprintf(f, "<text x=\"%.2f\" y=\"%.2f\" text-anchor=\"%s\"%s>", x, y, anchor, extra);
    bool cut = s && max > 3 && strnlen(s, max + 1) > max;
    pl_text_escaped(f, s, cut ? max - 3 : max);
    if (cut)
        fputs("...", f);
    fputs("</text>\n", f);
}

/* A tick label: whole numbers without decimals, others with up to 4 digits. */
static void pl_number(char *buf, size_t n, double v)
{
    if (fabs(v - round(v)) < 1e-9 * (fabs(v) + 1))
        snprintf(buf, n, "%.0f", round(v));
    else
        snprintf(buf, n, "%.4g", v);
}

/* ---- axes --------------------------------------------------------------- */

/* The smallest step of 1, 2 or 5 times a power of ten that cuts `span`
 * into at most `intervals` pieces. */
static double pl_nice_step(double span, int intervals)
{
    double raw = span / intervals, step = 1.0;
    while (step * 10.0 <= raw)
        step *= 10.0;
    while (step > raw && step > 1e-12)
        step /= 10.0;
    if (step >= raw)
        return step;
    if (2.0 * step >= raw)
        return 2.0 * step;
    return 5.0 * step >= raw ? 5.0 * step : 10.0 * step;
}

static pl_axis pl_y_axis(const pm_plot *p, const pm_plot_panel *pa)
{
    double top = 0.0;
    for (size_t s = 0; s < pa->nseries; s++)
        for (size_t i = 0; i < p->npoints; i++)
            if (isfinite(pa->series[s].y[i]) && pa->series[s].y[i] > top)
                top = pa->series[s].y[i];
    if (top <= 0.0)
        top = 1.0;
    double step = pl_nice_step(top, 6);
    return (pl_axis){0.0, ceil(top / step - 1e-9) * step, step};
}

static pl_axis pl_x_axis(const pm_plot *p)
{
    double lo = p->x[0], hi = p->x[p->npoints - 1];
    double span = hi > lo ? hi - lo : 1.0;
    double step = pl_nice_step(span, 10);
    if (p->x_integer && step < 1.0)
        step = 1.0;
    double pad = hi > lo ? span * 0.04 : 0.5;
    return (pl_axis){lo - pad, hi + pad, step};
}

static double pl_px(const pl_frame *fr, double x)
{
    return fr->left + (x - fr->x.lo) / (fr->x.hi - fr->x.lo) * fr->width;
}

static double pl_py(const pl_frame *fr, double y)
{
    return fr->top + fr->height - (y - fr->y.lo) / (fr->y.hi - fr->y.lo) * fr->height;
}

static void pl_y_ticks(FILE *f, const pl_frame *fr)
{
    int n = (int)floor((fr->y.hi - fr->y.lo) / fr->y.step + 0.5);
    for (int k = 0; k <= n; k++) {
        double v = fr->y.lo + k * fr->y.step, y = pl_py(fr, v);
        char num[32];
        pl_number(num, sizeof num, v);
        fprintf(f, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"#dddddd\"/>\n",
                fr->left, y, fr->left + fr->width, y);
        pl_text(f, fr->left - 6.0, y + 4.0, "end", "", num, sizeof num);
    }
}

static void pl_x_ticks(FILE *f, const pl_frame *fr, const pm_plot *p)
{
    double first = ceil(p->x[0] / fr->x.step - 1e-9) * fr->x.step;
    double bottom = fr->top + fr->height;
    for (double v = first; v <= p->x[p->npoints - 1] + 1e-9; v += fr->x.step) {
        double x = pl_px(fr, v);
        char num[32];
        pl_number(num, sizeof num, v);
        fprintf(f, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"#000000\"/>\n",
                x, bottom, x, bottom + 5.0);
        pl_text(f, x, bottom + 19.0, "middle", "", num, sizeof num);
    }
}

static void pl_axes(FILE *f, const pl_frame *fr, const pm_plot *p, const pm_plot_panel *pa)
{
    pl_y_ticks(f, fr);
    fprintf(f, "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"none\" "
               "stroke=\"#000000\"/>\n", fr->left, fr->top, fr->width, fr->height);
    pl_x_ticks(f, fr, p);
    pl_text(f, fr->left + fr->width / 2.0, fr->top + fr->height + 42.0, "middle", "",
            p->xlabel, svg_fit_chars(2 * (fr->left + fr->width / 2.0) - 8, 13, SVG_EM_REGULAR));
    char rot[96];
    double cx = fr->left - 58.0, cy = fr->top + fr->height / 2.0;
    snprintf(rot, sizeof rot, " font-size=\"12\" transform=\"rotate(-90 %.2f %.2f)\"", cx,
             cy);
    /* turned upright, the label may reach 30 px into the margins above and below */
    pl_text(f, cx, cy, "middle", rot, pa->ylabel,
            svg_fit_chars(fr->height + 60.0, 12, SVG_EM_REGULAR));
}

/* ---- series ------------------------------------------------------------- */

static void pl_style(FILE *f, size_t s)
{
    fprintf(f, " fill=\"none\" stroke=\"%s\" stroke-width=\"2\"", pl_colour[s]);
    if (pl_dash[s][0])
        fprintf(f, " stroke-dasharray=\"%s\"", pl_dash[s]);
}

/* Marker shapes by series: circle, square, triangle, diamond, then the
 * same four open. */
static void pl_marker(FILE *f, size_t s, double x, double y)
{
    const char *fill = s < 4 ? pl_colour[s] : "#ffffff";
    switch (s % 4) {
    case 0:
        fprintf(f, "<circle cx=\"%.2f\" cy=\"%.2f\" r=\"3.5\"", x, y);
        break;
    case 1:
        fprintf(f, "<rect x=\"%.2f\" y=\"%.2f\" width=\"7\" height=\"7\"", x - 3.5, y - 3.5);
        break;
    case 2:
        fprintf(f, "<path d=\"M %.2f %.2f L %.2f %.2f L %.2f %.2f Z\"", x, y - 4.5, x + 4.0,
                y + 3.0, x - 4.0, y + 3.0);
        break;
    default:
        fprintf(f, "<path d=\"M %.2f %.2f L %.2f %.2f L %.2f %.2f L %.2f %.2f Z\"", x, y - 4.5,
                x + 4.5, y, x, y + 4.5, x - 4.5, y);
        break;
    }
    fprintf(f, " fill=\"%s\" stroke=\"%s\" stroke-width=\"1.5\"/>\n", fill, pl_colour[s]);
}

static size_t pl_style_of(const pm_plot_series *se, size_t pos)
{
    return (se->style ? se->style - 1 : pos) % PM_PLOT_MAX_SERIES;
}

/* One polyline per run of finite values. */
static void pl_series(FILE *f, const pl_frame *fr, const pm_plot *p, const pm_plot_series *se,
                      size_t pos)
{
    size_t s = pl_style_of(se, pos);
    size_t i = 0;
    while (i < p->npoints) {
        while (i < p->npoints && !isfinite(se->y[i]))
            i++;
        if (i == p->npoints)
            break;
        fputs("<polyline points=\"", f);
        for (size_t k = 0; i < p->npoints && isfinite(se->y[i]); i++, k++)
            fprintf(f, "%s%.2f,%.2f", k ? " " : "", pl_px(fr, p->x[i]), pl_py(fr, se->y[i]));
        fputc('"', f);
        pl_style(f, s);
        fputs("/>\n", f);
    }
    for (size_t k = 0; se->markers && k < p->npoints; k++)
        if (isfinite(se->y[k]))
            pl_marker(f, s, pl_px(fr, p->x[k]), pl_py(fr, se->y[k]));
}

static void pl_legend(FILE *f, const pl_frame *fr, const pm_plot_panel *pa)
{
    for (size_t k = 0; k < pa->nseries; k++) {
        size_t s = pl_style_of(&pa->series[k], k);
        double y = fr->top + 14.0 + (double)k * 24.0, x = PL_LEGEND_X;
        fprintf(f, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"", x, y, x + 36.0, y);
        pl_style(f, s);
        fputs("/>\n", f);
        if (pa->series[k].markers)
            pl_marker(f, s, x + 18.0, y);
        pl_text(f, x + 44.0, y + 4.0, "start", "", pa->series[k].label,
                svg_fit_chars(PL_W - (x + 44.0) - 4.0, 13, SVG_EM_REGULAR));
    }
}

/* ---- document ----------------------------------------------------------- */

static void pl_footnote(FILE *f, const char *s, double y)
{
    while (s && *s) {
        size_t n = strlen(s);
        if (n > PL_FOOT_CHARS)
            for (n = PL_FOOT_CHARS; n > 0 && s[n] != ' '; n--)
                ;
        if (n == 0)
            n = PL_FOOT_CHARS;
        pl_text(f, 16.0, y, "start", " font-size=\"11\" fill=\"#444444\"", s, n);
        s += n;
        while (*s == ' ')
            s++;
        y += 15.0;
    }
}

static double pl_height(const pm_plot *p)
{
    size_t lines = p->caution ? strlen(p->caution) / (PL_FOOT_CHARS - 20) + 2 : 0;
    return PL_HEAD + (double)p->npanels * (PL_PH + PL_GAP) + 15.0 * (double)lines + 10.0;
}

static int pl_check(const pm_plot *p)
{
    if (!p || p->npoints == 0 || !p->x || p->npanels == 0 || p->npanels > PM_PLOT_MAX_PANELS ||
        !p->panels)
        return PM_EINVAL;
    for (size_t i = 0; i < p->npoints; i++)
        if (!isfinite(p->x[i]) || (i > 0 && p->x[i] < p->x[i - 1]))
            return PM_EINVAL;
    for (size_t k = 0; k < p->npanels; k++) {
        if (p->panels[k].nseries > PM_PLOT_MAX_SERIES)
            return PM_EINVAL;
        for (size_t s = 0; s < p->panels[k].nseries; s++)
            if (!p->panels[k].series[s].y)
                return PM_EINVAL;
    }
    return PM_OK;
}

static void pl_head(FILE *f, const pm_plot *p, double h)
{
    fprintf(f, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
               "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"%.0f\" "
               "height=\"%.0f\" viewBox=\"0 0 %.0f %.0f\" font-family=\"sans-serif\" "
               "font-size=\"13\">\n<title>", PL_W, h, PL_W, h);
    pl_text_escaped(f, p->title ? p->title : "plot", 200);
    fprintf(f, "</title>\n<rect x=\"0\" y=\"0\" width=\"%.0f\" height=\"%.0f\" "
               "fill=\"#ffffff\"/>\n", PL_W, h);
    if (p->title)
        pl_text(f, 16.0, 28.0, "start", " font-size=\"17\" font-weight=\"bold\"", p->title,
                svg_fit_chars(PL_W - 32.0, 17, SVG_EM_BOLD));
    if (p->subtitle)
        pl_text(f, 16.0, 50.0, "start", " fill=\"#444444\"", p->subtitle,
                svg_fit_chars(PL_W - 32.0, 13, SVG_EM_REGULAR));
}

int pm_plot_write_svg(const pm_plot *p, FILE *out)
{
    if (!out || pl_check(p) != PM_OK)
        return PM_EINVAL;
    double h = pl_height(p);
    pl_head(out, p, h);
    pl_axis x = pl_x_axis(p);
    for (size_t k = 0; k < p->npanels; k++) {
        const pm_plot_panel *pa = &p->panels[k];
        pl_frame fr = {PL_ML, PL_HEAD + (double)k * (PL_PH + PL_GAP), PL_PW, PL_PH, x,
                       pl_y_axis(p, pa)};
        pl_axes(out, &fr, p, pa);
        for (size_t s = pa->nseries; s-- > 0;) /* the first series on top */
            pl_series(out, &fr, p, &pa->series[s], s);
        pl_legend(out, &fr, pa);
    }
    pl_footnote(out, p->caution, PL_HEAD + (double)p->npanels * (PL_PH + PL_GAP) + 4.0);
    fputs("</svg>\n", out);
    return ferror(out) ? PM_EIO : PM_OK;
}
