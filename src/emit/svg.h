/* svg.h - small plots as SVG, written by rigmat itself (no plotting library).
 *
 * A figure is one <svg> element holding one or more panels laid out in a
 * grid.  Each panel (rigmat_svg_plot) has two axes, a title, a legend and
 * any number of series; a series is a polyline, a set of markers, or both.
 * The caller fills plain structs whose arrays are borrowed for the duration
 * of the write only; nothing is allocated and nothing is kept.
 *
 * Ticks: linear axes are labelled at round numbers with steps of 1, 2 or 5
 * times a power of ten, after P. S. Heckbert, "Nice numbers for graph
 * labels", Graphics Gems, Academic Press, 1990, pp. 61-63 and 657-659 (the
 * "loose" labelling: the axis is widened to the outer ticks).  Log axes
 * (base 10) take a tick at every decade, with 2 and 5 in between when the
 * span is short.
 *
 * Styles: series k takes colour k and dash pattern k of two fixed cycles,
 * so the lines differ by dash as well as by hue and stay apart in
 * greyscale.  The colours are the colour-blind-safe set of M. Okabe and
 * K. Ito, "Color Universal Design" (2008), in an order of our own.
 *
 * Pole maps: RIGMAT_SVG_FRAME_S draws the imaginary axis across the panel
 * and shades the right half-plane faintly; RIGMAT_SVG_FRAME_Z draws the unit
 * circle and forces equal scales on both axes.
 *
 * Data: non-finite points, and points <= 0 on a log axis, are skipped and
 * break a line.  Axis ranges come from the data unless given; a degenerate
 * range (one value) is widened around that value.
 *
 * Text from the caller (titles, labels, units, legend names) is escaped
 * for XML, so any string from a model is safe to pass.
 */
#ifndef RIGMAT_SVG_H
#define RIGMAT_SVG_H

#include "rigmat_internal.h"
#include <stdio.h>

/* ----------------------------------------------------------------- ticks */

/* Heckbert's nice number: the 1, 2, 5 or 10 times a power of ten nearest
 * to x (round != 0) or the smallest one >= x (round == 0).  x > 0 and
 * finite; returns 0 otherwise. */
double rigmat_svg_nice_number(double x, int round);

/* Tick marks of one axis. */
typedef struct rigmat_svg_ticks {
    double lo, hi;    /* the widened range: lo <= data min, hi >= data max (to 1e-9 of hi - lo) */
    double step;      /* linear: the tick spacing; log: 0 */
    size_t count;     /* number of ticks, <= RIGMAT_SVG_MAX_TICKS */
    double value[24]; /* the ticks, ascending, lo <= value <= hi */
    int decimals;     /* linear: digits after the point that label every tick exactly */
} rigmat_svg_ticks;
#define RIGMAT_SVG_MAX_TICKS 24

/* Linear ticks for the data range [min, max] with about `target` (>= 2)
 * ticks.  min > max is swapped; min == max is widened by half its
 * magnitude each way (to [-1, 1] at zero).  Returns RIGMAT_EUSAGE for non-finite input, else RIGMAT_OK. */
rigmat_status rigmat_svg_ticks_linear(double min, double max, size_t target, rigmat_svg_ticks *t);

/* Log-10 ticks for the range [min, max], 0 < min <= max, finite: the range
 * widens to whole decades; ticks at each decade (every other one beyond
 * 12 decades) and at 2 and 5 times each decade when it spans 3 decades or
 * fewer.  RIGMAT_EUSAGE for a bad range. */
rigmat_status rigmat_svg_ticks_log(double min, double max, rigmat_svg_ticks *t);
/* The same with at most max_ticks ticks (2..13): every k-th decade, and 2
 * and 5 only when 3 per decade fit.  rigmat_svg_ticks_log is max_ticks 13. */
rigmat_status rigmat_svg_ticks_log_n(double min, double max, size_t max_ticks,
        rigmat_svg_ticks *t);

/* The label of tick value v on a linear axis with t->decimals digits
 * ("0.25", "-1.5", "1500"), or in scientific form ("1e-06", "2.5e+08")
 * when |v| is below 1e-3 or at least 1e6.  Zero takes the same decimals
 * ("0.0" beside "0.5"; "0" on an axis in scientific form).  Never "-0".  Writes at most cap bytes including the NUL. */
void rigmat_svg_tick_label(const rigmat_svg_ticks *t, double v, char *buf, size_t cap);

/* ------------------------------------------------------------------ plots */

typedef enum rigmat_svg_scale { RIGMAT_SVG_LINEAR = 0, RIGMAT_SVG_LOG10 } rigmat_svg_scale;

typedef struct rigmat_svg_axis {
    const char *label; /* "time"; NULL for none */
    const char *unit;  /* "s", "rad/s", "1"; NULL or "" for none; shown as "label [unit]" */
    rigmat_svg_scale scale;
    int fixed;       /* 1: show exactly min..max (a log axis widens to decades) */
    double min, max; /* with fixed; on a log axis both > 0 */
} rigmat_svg_axis;

typedef enum rigmat_svg_marker {
    RIGMAT_SVG_MARK_NONE = 0,
    RIGMAT_SVG_MARK_CROSS,  /* x: poles */
    RIGMAT_SVG_MARK_CIRCLE, /* o: zeros */
    RIGMAT_SVG_MARK_SQUARE,
    RIGMAT_SVG_MARK_TRIANGLE
} rigmat_svg_marker;

typedef struct rigmat_svg_series {
    const char *name;    /* legend entry; NULL leaves it out of the legend */
    const double *x, *y; /* n points; borrowed; may be NULL when n == 0 */
    size_t n;
    int line; /* 1: join the points */
    rigmat_svg_marker marker;
    size_t style; /* colour and dash index (cycles); same index, same look */
} rigmat_svg_series;

typedef enum rigmat_svg_frame {
    RIGMAT_SVG_FRAME_PLAIN = 0,
    RIGMAT_SVG_FRAME_S, /* s-plane: imaginary axis, stable half left */
    RIGMAT_SVG_FRAME_Z  /* z-plane: unit circle, equal scales */
} rigmat_svg_frame;

typedef struct rigmat_svg_plot {
    const char *title; /* NULL for none */
    rigmat_svg_axis x, y;
    rigmat_svg_frame frame;
    const rigmat_svg_series *series; /* nseries entries; borrowed */
    size_t nseries;
    int zero_line; /* 1: a faint line at y = 0 (linear y only) */
} rigmat_svg_plot;

typedef struct rigmat_svg_figure {
    const rigmat_svg_plot *plots; /* nplots panels, row by row; borrowed */
    size_t nplots;
    size_t columns;         /* panels per row; 0 means 1 */
    double panel_width_px;  /* 0 = 460 */
    double panel_height_px; /* 0 = 300 */
    const char *caption;    /* a line above the panels; NULL for none */
    int standalone;         /* 1: XML declaration and namespace, for a .svg file;
                                0: an <svg> element to place inline in HTML */
} rigmat_svg_figure;

/* Write the figure to f.  Returns RIGMAT_EUSAGE (in err) for a malformed
 * figure: a series with n > 0 and NULL data, a fixed range that is not
 * finite or not increasing (or not positive on a log axis), more than 64
 * series in a panel; RIGMAT_EIO when f reports an error.  Nothing is
 * written when the figure is malformed. */
rigmat_status rigmat_svg_write(FILE *f, const rigmat_svg_figure *fig, rigmat_error *err);

/* Write s to f with &, <, >, " and ' escaped, and control characters other
 * than tab and newline replaced by U+FFFD (they are not allowed in XML 1.0).
 * NULL writes nothing.  Used for HTML text and attributes as well. */
void rigmat_svg_escape(FILE *f, const char *s);

/* The colour (as "#rrggbb") and dash pattern (an SVG stroke-dasharray
 * value, "none" for solid) of a style index; both cycle. */
const char *rigmat_svg_colour(size_t style);
const char *rigmat_svg_dash(size_t style);

#endif
