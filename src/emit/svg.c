/* svg.c - figures of line plots and marker maps as SVG (svg.h).
 *
 * Everything is written in one pass after a validation pass, so a
 * malformed figure writes nothing.  Lines are clipped to the plot area
 * here (Liang-Barsky; Y.-D. Liang and B. A. Barsky, "A new concept and
 * method for line clipping", ACM TOG 3(1), 1984), not with an SVG
 * clipPath: a clipPath needs an id, and ids must be unique across every
 * figure of an HTML page, which a writer without state cannot promise.
 */
#include "svg.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* The colour-blind-safe colours of Okabe and Ito (2008) minus their
 * yellow, which is too light on white; the order is ours. */
static const char *const palette[] = { "#0072B2", "#D55E00", "#009E73", "#CC79A7",
                                       "#E69F00", "#56B4E9", "#000000" };
/* Dash patterns in px, one per colour, so style k is unique for k < 7 and
 * the series stay apart in greyscale. */
static const char *const dashes[] = { "none", "7 3",   "2 2.5",       "9 3 2 3",
                                      "4 4",  "1.2 3", "12 3 2 3 2 3" };
#define NSTYLES (sizeof palette / sizeof palette[0])

/* Layout, in px: font size, margins of a panel around its plot area, the
 * width of one character used to lay out the legend (a sans-serif
 * average at 11 px, common practice for estimating without a font). */
#define FONT_PX       11.0
#define CHAR_W_PX     6.2
#define MARGIN_LEFT   62.0
#define MARGIN_RIGHT  20.0
#define MARGIN_TOP    22.0
#define MARGIN_BOTTOM 40.0
#define LEGEND_ROW_PX 15.0
#define LEGEND_SAMPLE 22.0
#define CAPTION_PX    22.0
#define MAX_SERIES    64

double rigmat_svg_nice_number(double x, int round)
{
    double e, f, nf;

    if (!(x > 0.0) || !isfinite(x))
        return 0.0;
    e = floor(log10(x));
    f = x / pow(10.0, e); /* 1 <= f < 10, give or take rounding */
    if (round) {
        /* Heckbert (1990): thresholds 1.5, 3 and 7 between 1, 2, 5, 10 */
        nf = f < 1.5 ? 1.0 : f < 3.0 ? 2.0 : f < 7.0 ? 5.0 : 10.0;
    } else {
        nf = f <= 1.0 ? 1.0 : f <= 2.0 ? 2.0 : f <= 5.0 ? 5.0 : 10.0;
    }
    return nf * pow(10.0, e);
}

rigmat_status rigmat_svg_ticks_linear(double min, double max, size_t target, rigmat_svg_ticks *t)
{
    double range, d, k0, k1, v;
    size_t i, n;

    memset(t, 0, sizeof *t);
    if (!isfinite(min) || !isfinite(max))
        return RIGMAT_EUSAGE;
    if (min > max) {
        v = min;
        min = max;
        max = v;
    }
    if (target < 2)
        target = 2;
    if (target > RIGMAT_SVG_MAX_TICKS / 2)
        target = RIGMAT_SVG_MAX_TICKS / 2;
    if (max - min <= 1e-12 * fmax(fabs(min), fabs(max))) {
        /* one value: widen by half its size, or to [-1, 1] at zero */
        v = fabs(min) > 0.0 ? 0.5 * fabs(min) : 1.0;
        min -= v;
        max += v;
    }
    range = rigmat_svg_nice_number(max - min, 0);
    d = rigmat_svg_nice_number(range / (double)(target - 1), 1);
    if (!(d > 0.0) || !isfinite(d))
        return RIGMAT_EUSAGE;
    k0 = floor(min / d + 1e-9);
    k1 = ceil(max / d - 1e-9);
    if (k1 <= k0)
        k1 = k0 + 1.0;
    /* a wide span can still give too many ticks after widening: double up */
    while (k1 - k0 + 1.0 > (double)RIGMAT_SVG_MAX_TICKS) {
        d = rigmat_svg_nice_number(2.0 * d, 0);
        k0 = floor(min / d + 1e-9);
        k1 = ceil(max / d - 1e-9);
    }
    n = (size_t)(k1 - k0 + 1.0);
    for (i = 0; i < n; i++) {
        v = (k0 + (double)i) * d; /* a multiple of d, not a running sum */
        t->value[i] = fabs(v) < 1e-9 * d ? 0.0 : v;
    }
    t->count = n;
    t->lo = t->value[0];
    t->hi = t->value[n - 1];
    t->step = d;
    v = -floor(log10(d) + 1e-9);
    t->decimals = v > 0.0 ? (int)v : 0;
    return RIGMAT_OK;
}

rigmat_status rigmat_svg_ticks_log_n(double min, double max, size_t max_ticks,
        rigmat_svg_ticks *t)
{
    static const double sub[] = { 1.0, 2.0, 5.0 };
    double dlo, dhi, v;
    long k, stride, ndec, cap;
    size_t j, n = 0;

    memset(t, 0, sizeof *t);
    if (!isfinite(min) || !isfinite(max) || !(min > 0.0) || !(max > 0.0))
        return RIGMAT_EUSAGE;
    if (min > max) {
        v = min;
        min = max;
        max = v;
    }
    cap = max_ticks < 2 ? 2 : max_ticks > 13 ? 13 : (long)max_ticks;
    dlo = floor(log10(min) + 1e-9);
    dhi = ceil(log10(max) - 1e-9);
    if (dhi <= dlo)
        dhi = dlo + 1.0;
    if (dlo < -300.0 || dhi > 300.0)
        return RIGMAT_EUSAGE;
    ndec = (long)(dhi - dlo);
    stride = (ndec + cap - 2) / (cap - 1);
    /* decades dlo, dlo + stride, ... up to the first one at or above dhi */
    for (k = 0;; k += stride) {
        const double decade = pow(10.0, dlo + (double)k);
        for (j = 0; j < 3; j++) {
            if (j > 0 && (ndec > 3 || 3 * ndec + 1 > cap || k >= ndec))
                break;
            t->value[n++] = sub[j] * decade;
        }
        if (k >= ndec)
            break;
    }
    t->count = n;
    t->lo = pow(10.0, dlo);
    t->hi = t->value[n - 1];
    t->step = 0.0;
    t->decimals = 0;
    return RIGMAT_OK;
}

rigmat_status rigmat_svg_ticks_log(double min, double max, rigmat_svg_ticks *t)
{
    return rigmat_svg_ticks_log_n(min, max, 13, t);
}

void rigmat_svg_tick_label(const rigmat_svg_ticks *t, double v, char *buf, size_t cap)
{
    const double a = fabs(v);
    int sig;

    if (cap == 0)
        return;
    if (v == 0.0 || (t->step > 0.0 && a < 1e-9 * t->step)) {
        /* zero with the axis' decimals, and never "-0" */
        if (t->step >= 1e-3 && t->step < 1e6)
            snprintf(buf, cap, "%.*f", t->decimals, 0.0);
        else
            snprintf(buf, cap, "0");
        return;
    }
    if (t->step > 0.0 && (a < 1e-3 || a >= 1e6)) {
        sig = (int)(floor(log10(a) + 1e-9) - floor(log10(t->step) + 1e-9)) + 1;
        if (sig < 1)
            sig = 1;
        if (sig > 15)
            sig = 15;
        snprintf(buf, cap, "%.*g", sig, v);
    } else if (t->step > 0.0) {
        snprintf(buf, cap, "%.*f", t->decimals, v);
    } else {
        snprintf(buf, cap, "%.6g", v);
    }
}

/* ---------------------------------------------------------------- output */

void rigmat_svg_escape(FILE *f, const char *s)
{
    const unsigned char *p = (const unsigned char *)s;

    if (s == NULL)
        return;
    while (*p != '\0') {
        const unsigned char c = *p;
        size_t len = 0, i;

        if (c == '&') {
            fputs("&amp;", f);
        } else if (c == '<') {
            fputs("&lt;", f);
        } else if (c == '>') {
            fputs("&gt;", f);
        } else if (c == '"') {
            fputs("&quot;", f);
        } else if (c == '\'') {
            fputs("&#39;", f);
        } else if (c < 0x20 && c != '\t' && c != '\n') {
            fputs("\xEF\xBF\xBD", f);
        } else if (c < 0x80) {
            fputc(c, f);
        } else {
            /* a well-formed UTF-8 sequence is copied; anything else is U+FFFD */
            len = c >= 0xC2 && c <= 0xDF   ? 2
                  : c >= 0xE0 && c <= 0xEF ? 3
                  : c >= 0xF0 && c <= 0xF4 ? 4
                                           : 0;
            for (i = 1; i < len; i++)
                if ((p[i] & 0xC0) != 0x80)
                    break;
            if (len == 0 || i < len) {
                fputs("\xEF\xBF\xBD", f);
            } else {
                fwrite(p, 1, len, f);
                p += len;
                continue;
            }
        }
        p++;
    }
}

const char *rigmat_svg_colour(size_t style)
{
    return palette[style % NSTYLES];
}

const char *rigmat_svg_dash(size_t style)
{
    return dashes[style % NSTYLES];
}

/* One axis mapped onto pixels. */
struct axis_map {
    rigmat_svg_ticks ticks;
    int log;
    double lo, hi; /* data range shown (log10 of it on a log axis) */
    double p0, p1; /* pixels of lo and hi */
};

static double axis_t(const struct axis_map *a, double v)
{
    return a->log ? log10(v) : v;
}

static double axis_px(const struct axis_map *a, double v)
{
    return a->p0 + (axis_t(a, v) - a->lo) / (a->hi - a->lo) * (a->p1 - a->p0);
}

static int usable(const struct axis_map *a, double v)
{
    return isfinite(v) && (!a->log || v > 0.0);
}

static int point_ok(int xlog, int ylog, double x, double y)
{
    return isfinite(x) && isfinite(y) && (!xlog || x > 0.0) && (!ylog || y > 0.0);
}

/* The data range of one axis over every series; 0 when there is no point. */
static int data_range(const rigmat_svg_plot *p, int on_x, double *lo, double *hi)
{
    const int xlog = p->x.scale == RIGMAT_SVG_LOG10, ylog = p->y.scale == RIGMAT_SVG_LOG10;
    size_t s, i;
    int any = 0;

    for (s = 0; s < p->nseries; s++) {
        const rigmat_svg_series *r = &p->series[s];
        for (i = 0; i < r->n; i++) {
            const double v = on_x ? r->x[i] : r->y[i];
            if (!point_ok(xlog, ylog, r->x[i], r->y[i]))
                continue;
            if (!any || v < *lo)
                *lo = v;
            if (!any || v > *hi)
                *hi = v;
            any = 1;
        }
    }
    return any;
}

static rigmat_status check_axis(const rigmat_svg_axis *a, const char *which, rigmat_error *err)
{
    if (!a->fixed)
        return RIGMAT_OK;
    if (!isfinite(a->min) || !isfinite(a->max) || !(a->min < a->max))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "svg: fixed %s range is not finite and increasing",
                           which);
    if (a->scale == RIGMAT_SVG_LOG10 && !(a->min > 0.0))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "svg: fixed %s range of a log axis must be > 0",
                           which);
    return RIGMAT_OK;
}

static rigmat_status check_figure(const rigmat_svg_figure *fig, rigmat_error *err)
{
    size_t k, s;
    rigmat_status st;

    if (fig->nplots > 0 && fig->plots == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "svg: %zu panels and no data", fig->nplots);
    if (fig->panel_width_px < 0.0 || fig->panel_height_px < 0.0 || !isfinite(fig->panel_width_px) ||
        !isfinite(fig->panel_height_px))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "svg: panel size must be finite and >= 0");
    for (k = 0; k < fig->nplots; k++) {
        const rigmat_svg_plot *p = &fig->plots[k];
        if (p->nseries > MAX_SERIES)
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "svg: %zu series in one panel (at most %d)",
                               p->nseries, MAX_SERIES);
        if (p->nseries > 0 && p->series == NULL)
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "svg: panel %zu has series and no data", k);
        for (s = 0; s < p->nseries; s++)
            if (p->series[s].n > 0 && (p->series[s].x == NULL || p->series[s].y == NULL))
                return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "svg: series %zu of panel %zu has no data",
                                   s, k);
        st = check_axis(&p->x, "x", err);
        if (st == RIGMAT_OK)
            st = check_axis(&p->y, "y", err);
        if (st != RIGMAT_OK)
            return st;
    }
    return RIGMAT_OK;
}

/* Ticks and range of one axis: fixed, from data, or a default. */
static void axis_setup(const rigmat_svg_plot *p, int on_x, size_t target, size_t log_max,
        struct axis_map *m)
{
    const rigmat_svg_axis *a = on_x ? &p->x : &p->y;
    double lo = 0.0, hi = 1.0;
    int any;

    m->log = a->scale == RIGMAT_SVG_LOG10;
    if (a->fixed) {
        lo = a->min;
        hi = a->max;
    } else {
        any = data_range(p, on_x, &lo, &hi);
        if (!any)
            lo = m->log ? 1.0 : 0.0, hi = m->log ? 10.0 : 1.0;
        if (p->frame == RIGMAT_SVG_FRAME_Z) {
            /* the unit circle always shows */
            lo = fmin(lo, -1.1);
            hi = fmax(hi, 1.1);
        } else if (p->frame == RIGMAT_SVG_FRAME_S) {
            /* the imaginary axis (x) and the real axis (y) always show */
            lo = fmin(lo, 0.0);
            hi = fmax(hi, 0.0);
            if (on_x && hi <= 0.0)
                hi = 0.1 * (hi - lo);
        }
    }
    if (m->log)
        rigmat_svg_ticks_log_n(lo, hi, log_max, &m->ticks);
    else
        rigmat_svg_ticks_linear(lo, hi, target, &m->ticks);
    if (a->fixed && !m->log) {
        /* a fixed range is kept exactly; only the ticks inside it show */
        m->lo = lo;
        m->hi = hi;
    } else {
        m->lo = axis_t(m, m->ticks.lo);
        m->hi = axis_t(m, m->ticks.hi);
    }
}

static void num(FILE *f, double v)
{
    fprintf(f, "%.2f", fabs(v) < 0.005 ? 0.0 : v);
}

static void axis_title(FILE *f, const rigmat_svg_axis *a)
{
    rigmat_svg_escape(f, a->label);
    if (a->unit != NULL && a->unit[0] != '\0') {
        fputs(a->label != NULL ? " [" : "[", f);
        rigmat_svg_escape(f, a->unit);
        fputc(']', f);
    }
}

/* A tick label; decades far from 1 on a log axis as 10 with a raised power. */
static void tick_text(FILE *f, const struct axis_map *m, double v)
{
    char buf[48];
    double e;

    if (m->log) {
        e = floor(log10(v) + 0.5);
        if (fabs(v / pow(10.0, e) - 1.0) < 1e-9 && (e < -2.0 || e > 3.0)) {
            fprintf(f, "10<tspan dy=\"-4\" font-size=\"8\">%.0f</tspan>", e);
            return;
        }
    }
    rigmat_svg_tick_label(&m->ticks, v, buf, sizeof buf);
    /* a typographic minus reads better than a hyphen */
    if (buf[0] == '-')
        fprintf(f, "\xE2\x88\x92%s", buf + 1);
    else
        fputs(buf, f);
}

static void marker(FILE *f, rigmat_svg_marker mk, double x, double y, const char *colour)
{
    const double r = 3.6;

    switch (mk) {
    case RIGMAT_SVG_MARK_NONE:
        return;
    case RIGMAT_SVG_MARK_CROSS:
        fputs("<path d=\"M", f);
        num(f, x - r), fputc(' ', f), num(f, y - r), fputs("L", f);
        num(f, x + r), fputc(' ', f), num(f, y + r), fputs("M", f);
        num(f, x - r), fputc(' ', f), num(f, y + r), fputs("L", f);
        num(f, x + r), fputc(' ', f), num(f, y - r);
        fprintf(f, "\" stroke=\"%s\" stroke-width=\"1.8\" fill=\"none\"/>", colour);
        break;
    case RIGMAT_SVG_MARK_CIRCLE:
        fputs("<circle cx=\"", f);
        num(f, x), fputs("\" cy=\"", f), num(f, y);
        fprintf(f, "\" r=\"%.1f\" stroke=\"%s\" stroke-width=\"1.5\" fill=\"none\"/>", r, colour);
        break;
    case RIGMAT_SVG_MARK_SQUARE:
        fputs("<rect x=\"", f);
        num(f, x - r * 0.85), fputs("\" y=\"", f), num(f, y - r * 0.85);
        fprintf(f, "\" width=\"%.2f\" height=\"%.2f\" fill=\"%s\"/>", 1.7 * r, 1.7 * r, colour);
        break;
    case RIGMAT_SVG_MARK_TRIANGLE:
        fputs("<path d=\"M", f);
        num(f, x), fputc(' ', f), num(f, y - r * 1.1), fputs("L", f);
        num(f, x + r), fputc(' ', f), num(f, y + r * 0.8), fputs("L", f);
        num(f, x - r), fputc(' ', f), num(f, y + r * 0.8);
        fprintf(f, "Z\" fill=\"%s\"/>", colour);
        break;
    }
    fputc('\n', f);
}

/* Liang-Barsky: clip the segment (x0,y0)-(x1,y1) to the box; 0 if it
 * misses, else the kept part in t0..t1 of the segment. */
static int clip(double x0, double y0, double x1, double y1, const double box[4], double *t0,
                double *t1)
{
    const double dx = x1 - x0, dy = y1 - y0;
    const double pp[4] = { -dx, dx, -dy, dy };
    const double qq[4] = { x0 - box[0], box[1] - x0, y0 - box[2], box[3] - y0 };
    size_t i;

    *t0 = 0.0;
    *t1 = 1.0;
    for (i = 0; i < 4; i++) {
        if (pp[i] == 0.0) {
            if (qq[i] < 0.0)
                return 0;
        } else {
            const double r = qq[i] / pp[i];
            if (pp[i] < 0.0) {
                if (r > *t1)
                    return 0;
                if (r > *t0)
                    *t0 = r;
            } else {
                if (r < *t0)
                    return 0;
                if (r < *t1)
                    *t1 = r;
            }
        }
    }
    return 1;
}

/* The polyline of a series as one path, broken at unusable points and
 * where it leaves the box. */
static void series_path(FILE *f, const rigmat_svg_series *r, const struct axis_map *mx,
                        const struct axis_map *my, const double box[4], size_t style)
{
    size_t i;
    int open = 0, pen = 0; /* path element written; pen at the last point */
    double px = 0.0, py = 0.0, t0, t1;
    int have_prev = 0;

    for (i = 0; i < r->n; i++) {
        double cx, cy;

        if (!usable(mx, r->x[i]) || !usable(my, r->y[i])) {
            have_prev = 0;
            pen = 0;
            continue;
        }
        cx = axis_px(mx, r->x[i]);
        cy = axis_px(my, r->y[i]);
        if (have_prev && clip(px, py, cx, cy, box, &t0, &t1)) {
            const double ax = px + t0 * (cx - px), ay = py + t0 * (cy - py);
            const double bx = px + t1 * (cx - px), by = py + t1 * (cy - py);
            if (!open) {
                fprintf(f,
                        "<path fill=\"none\" stroke=\"%s\" stroke-width=\"1.7\" "
                        "stroke-linejoin=\"round\"",
                        rigmat_svg_colour(style));
                if (strcmp(rigmat_svg_dash(style), "none") != 0)
                    fprintf(f, " stroke-dasharray=\"%s\"", rigmat_svg_dash(style));
                fputs(" d=\"", f);
                open = 1;
            }
            if (!pen || t0 > 0.0) {
                fputs("M", f), num(f, ax), fputc(' ', f), num(f, ay);
            }
            fputs("L", f), num(f, bx), fputc(' ', f), num(f, by);
            pen = t1 >= 1.0;
        } else {
            pen = 0;
        }
        px = cx;
        py = cy;
        have_prev = 1;
    }
    if (open)
        fputs("\"/>\n", f);
}

struct legend_item {
    size_t series;
    double x, y; /* top-left of the entry */
};

/* Lay the legend out in rows across width w starting at (x, y); returns
 * the number of rows; fills items when not NULL. */
static size_t legend_layout(const rigmat_svg_plot *p, double x, double y, double w,
                            struct legend_item *items, size_t *nitems)
{
    size_t s, rows = 0, n = 0;
    double cx = x;

    for (s = 0; s < p->nseries; s++) {
        const char *name = p->series[s].name;
        double ew;

        if (name == NULL || name[0] == '\0')
            continue;
        ew = LEGEND_SAMPLE + 5.0 + CHAR_W_PX * (double)strlen(name) + 10.0;
        if (rows == 0 || (cx + ew > x + w && cx > x)) {
            rows++;
            cx = x;
        }
        if (items != NULL) {
            items[n].series = s;
            items[n].x = cx;
            items[n].y = y + (double)(rows - 1) * LEGEND_ROW_PX;
        }
        n++;
        cx += ew;
    }
    if (nitems != NULL)
        *nitems = n;
    return rows;
}

static void legend_draw(FILE *f, const rigmat_svg_plot *p, const struct legend_item *items,
                        size_t n)
{
    size_t i;

    for (i = 0; i < n; i++) {
        const rigmat_svg_series *r = &p->series[items[i].series];
        const char *col = rigmat_svg_colour(r->style);
        const double ym = items[i].y + LEGEND_ROW_PX / 2.0;

        if (r->line || r->marker == RIGMAT_SVG_MARK_NONE) {
            fprintf(f, "<path stroke=\"%s\" stroke-width=\"1.7\" fill=\"none\"", col);
            if (strcmp(rigmat_svg_dash(r->style), "none") != 0)
                fprintf(f, " stroke-dasharray=\"%s\"", rigmat_svg_dash(r->style));
            fputs(" d=\"M", f), num(f, items[i].x), fputc(' ', f), num(f, ym);
            fputs("h", f), num(f, LEGEND_SAMPLE), fputs("\"/>\n", f);
        }
        marker(f, r->marker, items[i].x + LEGEND_SAMPLE / 2.0, ym, col);
        fputs("<text x=\"", f), num(f, items[i].x + LEGEND_SAMPLE + 5.0);
        fputs("\" y=\"", f), num(f, ym + 3.8), fputs("\">", f);
        rigmat_svg_escape(f, r->name);
        fputs("</text>\n", f);
    }
}

static void line(FILE *f, double x0, double y0, double x1, double y1, const char *attrs)
{
    fputs("<line x1=\"", f), num(f, x0), fputs("\" y1=\"", f), num(f, y0);
    fputs("\" x2=\"", f), num(f, x1), fputs("\" y2=\"", f), num(f, y1);
    fprintf(f, "\" %s/>\n", attrs);
}

/* One panel with its top-left corner at (ox, oy). */
static void panel(FILE *f, const rigmat_svg_plot *p, double ox, double oy, double w, double h)
{
    struct legend_item items[MAX_SERIES];
    struct axis_map mx, my;
    size_t nitems = 0, rows, i, s;
    double box[4], top, scale, mid, half;
    const int title_gap = p->title != NULL && p->title[0] != '\0';

    memset(&mx, 0, sizeof mx);
    memset(&my, 0, sizeof my);
    top = oy + (title_gap ? MARGIN_TOP : 8.0);
    rows = legend_layout(p, ox + MARGIN_LEFT, top, w - MARGIN_LEFT - MARGIN_RIGHT, items, &nitems);
    top += (double)rows * LEGEND_ROW_PX + (rows > 0 ? 4.0 : 0.0);
    box[0] = ox + MARGIN_LEFT;
    box[1] = ox + w - MARGIN_RIGHT;
    box[2] = top;
    box[3] = oy + h - MARGIN_BOTTOM;
    if (box[3] < box[2] + 40.0)
        box[3] = box[2] + 40.0;

    axis_setup(p, 1, (size_t)fmax(3.0, (box[1] - box[0]) / 75.0),
            (size_t)fmax(2.0, (box[1] - box[0]) / 40.0), &mx);
    axis_setup(p, 0, (size_t)fmax(3.0, (box[3] - box[2]) / 45.0),
            (size_t)fmax(2.0, (box[3] - box[2]) / 20.0), &my);
    if (p->frame == RIGMAT_SVG_FRAME_S && !p->y.fixed && !mx.log && !my.log) {
        /* symmetric about the real axis, and not a sliver: at least
         * +-15 % of the real span, so real poles do not sit on a line of
         * rounding noise */
        half = fmax(fmax(-my.lo, my.hi), 0.15 * (mx.hi - mx.lo));
        rigmat_svg_ticks_linear(-half, half, (size_t)fmax(3.0, (box[3] - box[2]) / 45.0),
                &my.ticks);
        half = fmax(-my.ticks.lo, my.ticks.hi);
        my.lo = -half, my.hi = half;
    }
    if (p->frame == RIGMAT_SVG_FRAME_Z && !mx.log && !my.log) {
        /* equal scales: widen the axis that has more room per unit */
        scale = fmax((mx.hi - mx.lo) / (box[1] - box[0]), (my.hi - my.lo) / (box[3] - box[2]));
        mid = 0.5 * (mx.lo + mx.hi);
        half = 0.5 * scale * (box[1] - box[0]);
        mx.lo = mid - half, mx.hi = mid + half;
        mid = 0.5 * (my.lo + my.hi);
        half = 0.5 * scale * (box[3] - box[2]);
        my.lo = mid - half, my.hi = mid + half;
        /* ticks over the widened ranges; those outside the box are skipped */
        rigmat_svg_ticks_linear(mx.lo, mx.hi, (size_t)fmax(3.0, (box[1] - box[0]) / 75.0),
                                &mx.ticks);
        rigmat_svg_ticks_linear(my.lo, my.hi, (size_t)fmax(3.0, (box[3] - box[2]) / 45.0),
                                &my.ticks);
    }
    mx.p0 = box[0], mx.p1 = box[1];
    my.p0 = box[3], my.p1 = box[2];

    fputs("<g>\n", f);
    if (title_gap) {
        fputs("<text x=\"", f), num(f, box[0]), fputs("\" y=\"", f), num(f, oy + 15.0);
        fputs("\" font-weight=\"bold\">", f);
        rigmat_svg_escape(f, p->title);
        fputs("</text>\n", f);
    }
    legend_draw(f, p, items, nitems);
    fputs("<rect x=\"", f), num(f, box[0]), fputs("\" y=\"", f), num(f, box[2]);
    fputs("\" width=\"", f), num(f, box[1] - box[0]), fputs("\" height=\"", f);
    num(f, box[3] - box[2]), fputs("\" fill=\"#fff\" stroke=\"none\"/>\n", f);
    if (p->frame == RIGMAT_SVG_FRAME_S && !mx.log && mx.lo < 0.0 && mx.hi > 0.0) {
        /* the unstable half-plane, faintly */
        const double x0 = axis_px(&mx, 0.0);
        fputs("<rect x=\"", f), num(f, x0), fputs("\" y=\"", f), num(f, box[2]);
        fputs("\" width=\"", f), num(f, box[1] - x0), fputs("\" height=\"", f);
        num(f, box[3] - box[2]), fputs("\" fill=\"#f7ebe4\"/>\n", f);
    }

    /* grid and tick labels */
    for (i = 0; i < mx.ticks.count; i++) {
        const double v = mx.ticks.value[i], px = axis_px(&mx, v);
        if (px < box[0] - 0.5 || px > box[1] + 0.5)
            continue;
        line(f, px, box[2], px, box[3], "stroke=\"#e2e2e2\" stroke-width=\"1\"");
        line(f, px, box[3], px, box[3] + 4.0, "stroke=\"#555\" stroke-width=\"1\"");
        fputs("<text x=\"", f), num(f, px), fputs("\" y=\"", f), num(f, box[3] + 15.0);
        fputs("\" text-anchor=\"middle\">", f);
        tick_text(f, &mx, v);
        fputs("</text>\n", f);
    }
    for (i = 0; i < my.ticks.count; i++) {
        const double v = my.ticks.value[i], py = axis_px(&my, v);
        if (py < box[2] - 0.5 || py > box[3] + 0.5)
            continue;
        line(f, box[0], py, box[1], py, "stroke=\"#e2e2e2\" stroke-width=\"1\"");
        line(f, box[0] - 4.0, py, box[0], py, "stroke=\"#555\" stroke-width=\"1\"");
        fputs("<text x=\"", f), num(f, box[0] - 6.0), fputs("\" y=\"", f), num(f, py + 3.8);
        fputs("\" text-anchor=\"end\">", f);
        tick_text(f, &my, v);
        fputs("</text>\n", f);
    }

    /* reference lines and circles */
    if ((p->zero_line || p->frame != RIGMAT_SVG_FRAME_PLAIN) && !my.log && my.lo < 0.0 &&
        my.hi > 0.0) {
        const double py = axis_px(&my, 0.0);
        line(f, box[0], py, box[1], py, "stroke=\"#8a8a8a\" stroke-width=\"1\"");
    }
    if (p->frame != RIGMAT_SVG_FRAME_PLAIN && !mx.log && mx.lo < 0.0 && mx.hi > 0.0) {
        const double px = axis_px(&mx, 0.0);
        line(f, px, box[2], px, box[3],
             p->frame == RIGMAT_SVG_FRAME_S ? "stroke=\"#444\" stroke-width=\"1.3\""
                                            : "stroke=\"#8a8a8a\" stroke-width=\"1\"");
    }
    if (p->frame == RIGMAT_SVG_FRAME_Z && !mx.log && !my.log) {
        fputs("<ellipse cx=\"", f), num(f, axis_px(&mx, 0.0));
        fputs("\" cy=\"", f), num(f, axis_px(&my, 0.0));
        fputs("\" rx=\"", f), num(f, axis_px(&mx, 1.0) - axis_px(&mx, 0.0));
        fputs("\" ry=\"", f), num(f, axis_px(&my, 0.0) - axis_px(&my, 1.0));
        fputs("\" fill=\"none\" stroke=\"#444\" stroke-width=\"1.3\"/>\n", f);
    }

    /* data: lines first, then markers above them */
    for (s = 0; s < p->nseries; s++)
        if (p->series[s].line)
            series_path(f, &p->series[s], &mx, &my, box, p->series[s].style);
    for (s = 0; s < p->nseries; s++) {
        const rigmat_svg_series *r = &p->series[s];
        if (r->marker == RIGMAT_SVG_MARK_NONE)
            continue;
        for (i = 0; i < r->n; i++) {
            double px, py;
            if (!usable(&mx, r->x[i]) || !usable(&my, r->y[i]))
                continue;
            px = axis_px(&mx, r->x[i]);
            py = axis_px(&my, r->y[i]);
            if (px < box[0] - 0.5 || px > box[1] + 0.5 || py < box[2] - 0.5 || py > box[3] + 0.5)
                continue;
            marker(f, r->marker, px, py, rigmat_svg_colour(r->style));
        }
    }

    /* frame and axis titles */
    fputs("<rect x=\"", f), num(f, box[0]), fputs("\" y=\"", f), num(f, box[2]);
    fputs("\" width=\"", f), num(f, box[1] - box[0]), fputs("\" height=\"", f);
    num(f, box[3] - box[2]), fputs("\" fill=\"none\" stroke=\"#555\" stroke-width=\"1\"/>\n", f);
    fputs("<text x=\"", f), num(f, 0.5 * (box[0] + box[1])), fputs("\" y=\"", f);
    num(f, box[3] + 32.0), fputs("\" text-anchor=\"middle\">", f);
    axis_title(f, &p->x);
    fputs("</text>\n", f);
    mid = 0.5 * (box[2] + box[3]);
    fputs("<text transform=\"translate(", f), num(f, ox + 14.0), fputc(' ', f), num(f, mid);
    fputs(") rotate(-90)\" text-anchor=\"middle\">", f);
    axis_title(f, &p->y);
    fputs("</text>\n</g>\n", f);
}

rigmat_status rigmat_svg_write(FILE *f, const rigmat_svg_figure *fig, rigmat_error *err)
{
    const size_t cols = fig->columns == 0 ? 1 : fig->columns;
    const double pw = fig->panel_width_px > 0.0 ? fig->panel_width_px : 460.0;
    const double ph = fig->panel_height_px > 0.0 ? fig->panel_height_px : 300.0;
    const int has_caption = fig->caption != NULL && fig->caption[0] != '\0';
    const double top = has_caption ? CAPTION_PX : 0.0;
    size_t rows, k, ncols;
    double width, height;
    rigmat_status st;

    st = check_figure(fig, err);
    if (st != RIGMAT_OK)
        return st;
    ncols = fig->nplots < cols ? (fig->nplots == 0 ? 1 : fig->nplots) : cols;
    rows = fig->nplots == 0 ? 1 : (fig->nplots + cols - 1) / cols;
    width = pw * (double)ncols;
    height = top + ph * (double)rows;
    if (fig->standalone)
        fputs("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n", f);
    fputs("<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"", f);
    num(f, width), fputs("\" height=\"", f), num(f, height);
    fputs("\" viewBox=\"0 0 ", f), num(f, width), fputc(' ', f), num(f, height);
    fprintf(f,
            "\" font-family=\"DejaVu Sans, Verdana, sans-serif\" font-size=\"%.0f\" "
            "fill=\"#222\" role=\"img\">\n",
            FONT_PX);
    if (has_caption) {
        fputs("<title>", f);
        rigmat_svg_escape(f, fig->caption);
        fputs("</title>\n<text x=\"8\" y=\"16\" font-size=\"13\" font-weight=\"bold\">", f);
        rigmat_svg_escape(f, fig->caption);
        fputs("</text>\n", f);
    }
    for (k = 0; k < fig->nplots; k++)
        panel(f, &fig->plots[k], pw * (double)(k % cols), top + ph * (double)(k / cols), pw, ph);
    fputs("</svg>\n", f);
    if (ferror(f))
        return RIGMAT_FAIL(err, RIGMAT_EIO, "svg: writing the figure failed");
    return RIGMAT_OK;
}
