/* svg.h: charts for the report as inline SVG: "nice" ticks, min/max per pixel column, axes, legend, markers. */
#ifndef GRITLINE_SVG_H
#define GRITLINE_SVG_H

#include <stddef.h>
#include <stdio.h>

/* Axis ticks: count values lo, lo + step, ... */
typedef struct SVG_Ticks {
  double lo;      /* first tick, in axis units */
  double step;    /* between ticks, axis units */
  int count;      /* ticks, at least 2 for a value axis */
  int decimals;   /* decimals that print every tick exactly */
} SVG_Ticks;

/* Ticks that cover [min, max] with steps of 1, 2, 2.5 or 5 times a power of ten,
 * the fewest steps up to max_ticks ticks (at least 3 are allowed: a range
 * around 0 needs -s, 0, s); the axis then runs from the first tick to the last.
 * An empty range is widened by 10 %. Returns 0, or -1 when min or max is not finite. */
int SVG_NiceTicks(double min, double max, int max_ticks, SVG_Ticks *t);
/* Ticks for a time axis over [t0, t1] (UNIX s), inside it, at whole minutes,
 * hours or days of local time (utc_offset_s east of UTC), at most max_ticks.
 * Returns 0, or -1 when t0 or t1 is not finite. */
int SVG_TimeTicks(double t0, double t1, int max_ticks, long utc_offset_s, SVG_Ticks *t);

/* One pixel column of a downsampled series. */
typedef struct SVG_Column {
  int column;      /* 0 .. columns-1 */
  double y_min;    /* lowest y of the points in it */
  double y_max;    /* highest */
  int min_first;   /* the lowest came before the highest (to draw a line in order) */
  int run_start;   /* a point in it follows a NAN (or is the first): a line breaks before it */
  size_t n;        /* points in it */
} SVG_Column;

/* Bins the points (x[i], y[i]) with x in [x0, x1] into `columns` equal pixel
 * columns and keeps each column's lowest and highest y: the shape of the
 * series at the chart's resolution, outliers included. Points with a NAN are
 * left out (and mark a break of the line before the next point). Fills out[]
 * (room for `columns`) with the columns that hold points, left to right;
 * returns how many. */
size_t SVG_Downsample(const double *x, const double *y, size_t n, double x0, double x1, int columns,
                      SVG_Column *out);

typedef enum SVG_Shape { SVG_NONE = 0, SVG_CIRCLE, SVG_TRIANGLE, SVG_SQUARE, SVG_DIAMOND } SVG_Shape;

/* A series of points and/or a line through them. */
typedef struct SVG_Series {
  const char *name;      /* legend text */
  const char *key;       /* short name for data-series (tests, styles) */
  const double *x, *y;   /* n values; NAN = no value (breaks a line) */
  const double *group;   /* a line joins only points of the same group value (e.g. the depth
                            of cut, whose thresholds differ); NULL = one group */
  size_t n;
  const char *colour;    /* stroke and fill */
  const char *dash;      /* stroke-dasharray of the line, NULL = solid */
  double line_width;     /* px, 0 = no line */
  SVG_Shape shape;       /* marker at each point, SVG_NONE = none */
  int hollow;            /* marker drawn as an outline */
} SVG_Series;

/* A vertical marker across the plot: a dress or an alert. */
typedef struct SVG_Mark {
  double x;              /* axis units */
  const char *tag;       /* short label above the plot, "D1", "A3" */
  const char *title;     /* tooltip */
  int kind;              /* 0 dress, 1 warning, 2 critical */
} SVG_Mark;

/* A band: y range (the aggressiveness window) or x range (a shift). */
typedef struct SVG_Band {
  double lo, hi;         /* axis units */
  const char *name;      /* legend text (y band) or label (x band) */
} SVG_Band;

typedef struct SVG_Chart {
  const char *id;            /* id of the svg element */
  const char *title;         /* accessible title */
  const char *x_label;       /* with unit */
  const char *y_label;       /* with unit */
  int width, height;         /* px (the svg scales to the page) */
  double x0, x1;             /* x range */
  int time_axis;             /* x is UNIX time, ticks in local time */
  long utc_offset_s;         /* for the time ticks */
  int y_from_zero;           /* the y range includes 0 */
  const SVG_Series *series;
  int n_series;
  const SVG_Band *y_band;    /* NULL = none */
  const SVG_Band *x_bands;   /* shaded alternately, labelled */
  int n_x_bands;
  const SVG_Mark *marks;
  int n_marks;
} SVG_Chart;

/* What was drawn. */
typedef struct SVG_Result {
  size_t points;       /* finite points over all series */
  size_t drawn;        /* markers or columns drawn */
  int downsampled;     /* some series was drawn per pixel column */
  int columns;         /* pixel columns of the plot */
} SVG_Result;

/* Writes the chart as one <svg> element. Returns 0, or -1 when out of memory. */
int SVG_WriteChart(FILE *f, const SVG_Chart *c, SVG_Result *r);
/* Writes text with &, <, >, " escaped (for HTML and SVG). */
void SVG_Escape(FILE *f, const char *text);

#endif
