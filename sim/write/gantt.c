/*
 * gantt.c - Gantt charts of schedules and simulated runs (gantt.h): a
 * plain-text chart for terminals and an SVG 1.1 document.  Both only read
 * the caller's lanes, boxes and arrows; the text chart shows boxes (arrows
 * are left to the caller's tables), the SVG shows both.  Output depends on
 * the chart alone, so it is byte-for-byte repeatable.
 */
#include "pacemap/gantt.h"
#include "pacemap/palette.h"
#include "svgtext.h"
#include "pacemap/error.h"
#include "pacemap/rational.h"

#include <stdbool.h>
#include <stdlib.h>
#include <string.h>

/* ---- shared ------------------------------------------------------------- */

/* The chart's time span: the latest end, at least 1. */
static int64_t gantt_span(const pm_gantt *c)
{
    int64_t span = 1;
    for (size_t i = 0; i < c->nboxes; i++)
        span = c->boxes[i].end > span ? c->boxes[i].end : span;
    for (size_t i = 0; i < c->narrows; i++)
        span = c->arrows[i].end > span ? c->arrows[i].end : span;
    return span;
}

/* A 1-2-5 step giving at most `most` ticks over span. */
static int64_t gantt_step(int64_t span, int64_t most)
{
    int64_t step = 1;
    for (;;) {
        static const int64_t m[3] = {1, 2, 5};
        for (int i = 0; i < 3; i++)
            if (span / (step * m[i]) <= most)
                return step * m[i];
        if (step > INT64_MAX / 100)
            return step * 10;
        step *= 10;
    }
}

static bool gantt_valid(const pm_gantt *c)
{
    if (!c || (c->nlanes && !c->lane_names) || (c->nboxes && !c->boxes) ||
        (c->narrows && !c->arrows))
        return false;
    for (size_t i = 0; i < c->nboxes; i++)
        if (c->boxes[i].lane >= c->nlanes || c->boxes[i].start < 0 ||
            c->boxes[i].end < c->boxes[i].start)
            return false;
    for (size_t i = 0; i < c->narrows; i++)
        if (c->arrows[i].from_lane >= c->nlanes || c->arrows[i].to_lane >= c->nlanes ||
            c->arrows[i].start < 0 || c->arrows[i].end < c->arrows[i].start)
            return false;
    return true;
}

/* Print s in lines of at most width columns, broken at spaces; with a
 * prefix callback each line is wrapped by it (SVG text elements). */
typedef void (*gantt_line_fn)(FILE *out, const char *s, int n, int index, const void *ctx);

static int gantt_wrap(FILE *out, const char *s, int width, gantt_line_fn line,
                      const void *ctx)
{
    int index = 0;
    while (*s) {
        int n = (int)strlen(s);
        if (n > width) {
            n = width;
            while (n > 0 && s[n] != ' ')
                n--;
            if (n == 0)
                n = width;
        }
        if (line)
            line(out, s, n, index, ctx);
        else
            fprintf(out, "%.*s\n", n, s);
        index++;
        s += n;
        while (*s == ' ')
            s++;
    }
    return index;
}

/* ---- text --------------------------------------------------------------- */

typedef struct tx_layout {
    int lw;      /* lane name column width */
    int cols;    /* chart cells */
    int64_t span;
} tx_layout;

static int tx_col(const tx_layout *l, int64_t t)
{
    return (int)((pm_i128)t * l->cols / l->span);
}

/* One lane row: '|' opens each box, then its label, then '-' padding; '#'
 * where several boxes open in one column.  Returns whether '#' was used. */
static bool tx_lane(const pm_gantt *c, const tx_layout *l, uint32_t lane, char *row)
{
    bool crowded = false;
    memset(row, ' ', (size_t)l->cols);
    row[l->cols] = '\0';
    for (size_t i = 0; i < c->nboxes; i++) {
        const pm_gantt_box *b = &c->boxes[i];
        if (b->lane != lane)
            continue;
        int c0 = tx_col(l, b->start), c1 = tx_col(l, b->end);
        if (c0 >= l->cols)
            c0 = l->cols - 1;
        if (c1 <= c0)
            c1 = c0 + 1;
        if (c1 > l->cols)
            c1 = l->cols;
        const char *s = b->label ? b->label : "";
        bool again = row[c0] == '|' || row[c0] == '#';
        crowded = crowded || again;
        row[c0] = again ? '#' : '|';
        for (int k = c0 + 1; k < c1; k++)
            row[k] = *s ? *s++ : '-';
    }
    return crowded;
}

/* Tick labels under the chart, left-aligned at their cell, never overlapping. */
static void tx_ticks(const tx_layout *l, FILE *out, uint64_t clock_hz)
{
    char *row = malloc((size_t)l->cols + 64);
    if (!row)
        return;
    memset(row, ' ', (size_t)l->cols + 63);
    row[l->cols + 63] = '\0';
    int64_t step = gantt_step(l->span, l->cols / 10 > 1 ? l->cols / 10 : 1);
    int free_from = 0, last = 0;
    for (int64_t t = 0; t <= l->span; t += step) {
        char num[40];
        if (clock_hz)
            snprintf(num, sizeof num, "%.4g", (double)t * 1e6 / (double)clock_hz);
        else
            snprintf(num, sizeof num, "%lld", (long long)t);
        int p = tx_col(l, t), n = (int)strlen(num);
        if (p < free_from || p + n > l->cols + 1)
            continue;
        memcpy(row + p, num, (size_t)n);
        free_from = p + n + 1;
        last = p + n;
        if (t > INT64_MAX - step)
            break;
    }
    row[last] = '\0';
    fprintf(out, "%*s  %s %s\n", l->lw, "", row, clock_hz ? "us" : "cycles");
    free(row);
}

int pm_gantt_write_text(const pm_gantt *c, FILE *out, int width)
{
    if (!gantt_valid(c) || width > 100 || width < 30)
        return PM_EINVAL;
    tx_layout l = {.lw = 4, .span = gantt_span(c)};
    for (uint32_t i = 0; i < c->nlanes; i++) {
        int n = (int)strlen(c->lane_names[i]);
        l.lw = n > l.lw ? n : l.lw;
    }
    l.lw = l.lw > 12 ? 12 : l.lw;
    l.cols = width - l.lw - 3 - 7; /* room for " cycles" after the ticks */
    char *row = malloc((size_t)l.cols + 1);
    if (!row)
        return PM_ENOMEM;
    if (c->title)
        fprintf(out, "%.*s\n", width, c->title);
    bool crowded = false;
    for (uint32_t i = 0; i < c->nlanes; i++) {
        crowded = tx_lane(c, &l, i, row) || crowded;
        fprintf(out, "%-*.*s |%s|\n", l.lw, l.lw, c->lane_names[i], row);
    }
    free(row);
    tx_ticks(&l, out, 0);
    if (c->clock_hz)
        tx_ticks(&l, out, c->clock_hz);
    if (crowded)
        gantt_wrap(out, "# marks several nodes starting within one column", width, NULL, NULL);
    if (c->caution)
        gantt_wrap(out, c->caution, width, NULL, NULL);
    return ferror(out) ? PM_EIO : PM_OK;
}

/* ---- SVG ---------------------------------------------------------------- */

enum { SV_W = 960, SV_LEFT = 110, SV_RIGHT = 30, SV_TOP = 40, SV_LANE = 28, SV_GAP = 8,
       SV_FONT = 11, SV_TITLE_FONT = 14, SV_CAUTION_FONT = 9, SV_LEGEND_H = 20 };


static void sv_text(FILE *out, const char *s, size_t max)
{
    for (size_t i = 0; s && s[i] && i < max; i++) {
        switch (s[i]) {
        case '<': fputs("&lt;", out); break;
        case '>': fputs("&gt;", out); break;
        case '&': fputs("&amp;", out); break;
        case '"': fputs("&quot;", out); break;
        default: fputc(s[i], out);
        }
    }
}

static double sv_x(int64_t t, int64_t span)
{
    return SV_LEFT + (double)t * (SV_W - SV_LEFT - SV_RIGHT) / (double)span;
}

static double sv_lane_y(uint32_t lane)
{
    return SV_TOP + (double)lane * (SV_LANE + SV_GAP);
}

static void sv_lanes(const pm_gantt *c, FILE *out)
{
    for (uint32_t i = 0; i < c->nlanes; i++) {
        double y = sv_lane_y(i);
        fprintf(out, "<rect x=\"%d\" y=\"%.2f\" width=\"%d\" height=\"%d\" fill=\"#f4f4f4\"/>\n",
                SV_LEFT, y, SV_W - SV_LEFT - SV_RIGHT, SV_LANE);
        fprintf(out, "<text x=\"8\" y=\"%.2f\" class=\"lane\">", y + SV_LANE * 0.65);
        sv_text(out, c->lane_names[i], svg_fit_chars(SV_LEFT - 12, SV_FONT, SVG_EM_REGULAR));
        fputs("</text>\n", out);
    }
}

static void sv_boxes(const pm_gantt *c, FILE *out, int64_t span)
{
    for (size_t i = 0; i < c->nboxes; i++) {
        const pm_gantt_box *b = &c->boxes[i];
        double x0 = sv_x(b->start, span), w = sv_x(b->end, span) - x0, y = sv_lane_y(b->lane);
        fprintf(out, "<g><title>");
        sv_text(out, b->label, 200);
        fprintf(out, " [%lld, %lld)</title>", (long long)b->start, (long long)b->end);
        fprintf(out, "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%d\" fill=\"%s\" "
                "stroke=\"#333\" stroke-width=\"0.6\"/>",
                x0, y + 2, w, SV_LANE - 4, pm_palette_iteration[b->iteration % PM_PALETTE_NITER]);
        size_t fit = svg_fit_chars(w - 4, SV_FONT, SVG_EM_REGULAR);
        if (fit > 0 && b->label) {
            fprintf(out, "<text x=\"%.2f\" y=\"%.2f\" class=\"box\">", x0 + 2, y + SV_LANE * 0.65);
            sv_text(out, b->label, fit);
            fputs("</text>", out);
        }
        fputs("</g>\n", out);
    }
}

static void sv_arrows(const pm_gantt *c, FILE *out, int64_t span)
{
    for (size_t i = 0; i < c->narrows; i++) {
        const pm_gantt_arrow *a = &c->arrows[i];
        double y0 = sv_lane_y(a->from_lane) + SV_LANE / 2.0;
        double y1 = sv_lane_y(a->to_lane) + SV_LANE / 2.0;
        fprintf(out, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" class=\"xfer\" "
                "marker-end=\"url(#head)\">", sv_x(a->start, span), y0, sv_x(a->end, span), y1);
        if (a->label) {
            fputs("<title>", out);
            sv_text(out, a->label, 200);
            fputs("</title>", out);
        }
        fputs("</line>\n", out);
    }
}

/* A tick label centred on x, moved in as far as needed to stay inside. */
static void sv_tick(FILE *out, double x, double y, const char *num)
{
    double half = (double)strlen(num) * SV_FONT * SVG_EM_REGULAR / 2.0;
    if (x + half > SV_W - 2)
        x = SV_W - 2 - half;
    fprintf(out, "<text x=\"%.2f\" y=\"%.2f\" class=\"tick\" text-anchor=\"middle\">%s"
            "</text>", x, y, num);
}

static void sv_axis(const pm_gantt *c, FILE *out, int64_t span, double y)
{
    fprintf(out, "<line x1=\"%d\" y1=\"%.2f\" x2=\"%d\" y2=\"%.2f\" stroke=\"#000\"/>\n",
            SV_LEFT, y, SV_W - SV_RIGHT, y);
    int64_t step = gantt_step(span, 10);
    for (int64_t t = 0; t <= span; t += step) {
        double x = sv_x(t, span);
        fprintf(out, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"#000\"/>",
                x, y, x, y + 4);
        char num[32];
        snprintf(num, sizeof num, "%lld", (long long)t);
        sv_tick(out, x, y + 16, num);
        if (c->clock_hz) {
            snprintf(num, sizeof num, "%.4g", (double)t * 1e6 / (double)c->clock_hz);
            sv_tick(out, x, y + 30, num);
        }
        fputc('\n', out);
        if (t > INT64_MAX - step)
            break;
    }
    fprintf(out, "<text x=\"8\" y=\"%.2f\" class=\"tick\">cycles</text>\n", y + 16);
    if (c->clock_hz)
        fprintf(out, "<text x=\"8\" y=\"%.2f\" class=\"tick\">us</text>\n", y + 30);
}

static void sv_caution_line(FILE *out, const char *s, int n, int index, const void *ctx)
{
    double y0 = *(const double *)ctx;
    fprintf(out, "<text x=\"8\" y=\"%.2f\" font-size=\"%d\">", y0 + 12.0 * index,
            SV_CAUTION_FONT);
    sv_text(out, s, (size_t)n);
    fputs("</text>\n", out);
}

static void sv_count_line(FILE *out, const char *s, int n, int index, const void *ctx)
{
    (void)out, (void)s, (void)n, (void)index, (void)ctx;
}

/* Characters of caution per line: what fits between the margins. */
static int sv_caution_chars(void)
{
    return (int)svg_fit_chars(SV_W - 16, SV_CAUTION_FONT, SVG_EM_REGULAR);
}

/* The title, cut with "..." where it would leave the picture. */
static void sv_title(FILE *out, const char *title)
{
    size_t fit = svg_fit_chars(SV_W - 16, SV_TITLE_FONT, SVG_EM_REGULAR);
    fputs("<text x=\"8\" y=\"22\" class=\"title\">", out);
    if (strlen(title) <= fit) {
        sv_text(out, title, fit);
    } else {
        sv_text(out, title, fit - 3);
        fputs("...", out);
    }
    fputs("</text>\n", out);
}

/* The legend: one swatch per iteration fill, and what an arrow is. */
static void sv_legend(FILE *out, double y, bool arrows)
{
    double x = 8;
    fprintf(out, "<text x=\"%.2f\" y=\"%.2f\">fill by iteration:</text>\n", x, y + 10);
    x += 19 * SV_FONT * SVG_EM_REGULAR;
    for (int i = 0; i < PM_PALETTE_NITER; i++) {
        fprintf(out, "<rect x=\"%.2f\" y=\"%.2f\" width=\"14\" height=\"12\" fill=\"%s\" "
                "stroke=\"#333\" stroke-width=\"0.6\"/><text x=\"%.2f\" y=\"%.2f\">%d</text>\n",
                x, y, pm_palette_iteration[i], x + 18, y + 10, i);
        x += 18 + 3 * SV_FONT * SVG_EM_REGULAR;
    }
    fprintf(out, "<text x=\"%.2f\" y=\"%.2f\">%s</text>\n", x, y + 10,
            arrows ? "(then again)  arrow: a transfer between cores" : "(then again)");
}


/* Dashed vertical marks across the lanes (a paced run's releases), each
 * labelled with its index above the lanes; marks past the chart's span are
 * left out. */
static void sv_marks(const pm_gantt *c, const int64_t *marks, size_t n, FILE *out,
                     int64_t span)
{
    double y0 = SV_TOP - 6, y1 = sv_lane_y(c->nlanes) - SV_GAP;
    for (size_t i = 0; i < n; i++) {
        if (marks[i] < 0 || marks[i] > span)
            continue;
        double x = sv_x(marks[i], span);
        fprintf(out, "<g class=\"release\"><title>release %zu at %lld</title>"
                     "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"#555\" "
                     "stroke-dasharray=\"3,3\"/><text x=\"%.2f\" y=\"%.2f\" font-size=\"9\">"
                     "%zu</text></g>\n",
                i, (long long)marks[i], x, y0, x, y1, x + 2, y0 - 2, i);
    }
}

static int sv_write(const pm_gantt *c, const int64_t *marks, size_t nmarks, FILE *out)
{
    if (!gantt_valid(c))
        return PM_EINVAL;
    int64_t span = gantt_span(c);
    double axis_y = sv_lane_y(c->nlanes) + 4;
    int lines = c->caution ? gantt_wrap(out, c->caution, sv_caution_chars(), sv_count_line, NULL)
                           : 0;
    double legend_y = axis_y + (c->clock_hz ? 40 : 26);
    double h = legend_y + SV_LEGEND_H + 12 * lines + 14;
    fprintf(out, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
                 "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"%d\" "
                 "height=\"%.0f\" viewBox=\"0 0 %d %.0f\">\n", SV_W, h, SV_W, h);
    fputs("<defs><marker id=\"head\" markerWidth=\"8\" markerHeight=\"6\" refX=\"8\" refY=\"3\" "
          "orient=\"auto\"><path d=\"M0,0 L8,3 L0,6 z\" fill=\"#b00\"/></marker></defs>\n"
          "<style>text{font-family:monospace;font-size:11px}.title{font-size:14px}"
          ".xfer{stroke:#b00;stroke-width:1.2}</style>\n"
          "<rect width=\"100%\" height=\"100%\" fill=\"#fff\"/>\n", out);
    if (c->title)
        sv_title(out, c->title);
    sv_lanes(c, out);
    sv_boxes(c, out, span);
    sv_arrows(c, out, span);
    sv_marks(c, marks, nmarks, out, span);
    sv_axis(c, out, span, axis_y);
    sv_legend(out, legend_y, c->narrows > 0);
    if (c->caution) {
        double y0 = legend_y + SV_LEGEND_H + 12;
        gantt_wrap(out, c->caution, sv_caution_chars(), sv_caution_line, &y0);
    }
    fputs("</svg>\n", out);
    return ferror(out) ? PM_EIO : PM_OK;
}

int pm_gantt_write_svg(const pm_gantt *c, FILE *out)
{
    return sv_write(c, NULL, 0, out);
}

int pm_gantt_write_svg_marked(const pm_gantt *c, const int64_t *marks, size_t nmarks, FILE *out)
{
    return sv_write(c, marks, nmarks, out);
}
