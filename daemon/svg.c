/* svg.c: charts for the report as inline SVG (ticks, downsampling, axes, legend, markers). */
#include "svg.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#define MAX_GROUPS 8

int SVG_NiceTicks(double min, double max, int max_ticks, SVG_Ticks *t)
{
  if (!isfinite(min) || !isfinite(max))
    return -1;
  if (max < min) {
    double x = min;
    min = max;
    max = x;
  }
  if (max - min < 1e-12 * (fabs(min) + fabs(max)) || max == min) {
    double d = fabs(min) > 0.0 ? fabs(min) * 0.1 : 1.0;
    min -= d;
    max += d;
  }
  if (max_ticks < 3)
    max_ticks = 3; /* a range around 0 needs three: -s, 0, s */
  static const double mant[] = {1.0, 2.0, 2.5, 5.0};
  double raw = (max - min) / (max_ticks - 1);
  int e = (int)floor(log10(raw));
  for (; e < 308; e++) {
    for (int k = 0; k < 4; k++) {
      double step = mant[k] * pow(10.0, e);
      if (step < raw * (1.0 - 1e-9))
        continue;
      /* Tolerances keep a bound that is a multiple of step (up to rounding) on it. */
      double lo_i = floor(min / step + 1e-9), hi_i = ceil(max / step - 1e-9);
      int count = (int)llround(hi_i - lo_i) + 1;
      if (count > max_ticks)
        continue;
      t->step = step;
      t->lo = lo_i * step;
      t->count = count;
      int d = -e + (k == 2 ? 1 : 0);
      t->decimals = d > 0 ? d : 0;
      return 0;
    }
  }
  return -1;
}

int SVG_TimeTicks(double t0, double t1, int max_ticks, long utc_offset_s, SVG_Ticks *t)
{
  static const double steps[] = {60, 120, 300, 600, 900, 1800, 3600, 7200, 10800, 21600, 43200, 86400, 172800,
                                 604800, 2419200};
  if (!isfinite(t0) || !isfinite(t1))
    return -1;
  if (t1 < t0) {
    double x = t0;
    t0 = t1;
    t1 = x;
  }
  if (max_ticks < 1)
    max_ticks = 1;
  size_t n = sizeof steps / sizeof steps[0];
  for (size_t i = 0; i < n; i++) {
    double s = steps[i];
    double a = ceil((t0 + (double)utc_offset_s) / s), b = floor((t1 + (double)utc_offset_s) / s);
    int count = b >= a ? (int)(b - a) + 1 : 0;
    if (count <= max_ticks || i == n - 1) {
      t->step = s;
      t->lo = a * s - (double)utc_offset_s;
      t->count = count;
      t->decimals = 0;
      return 0;
    }
  }
  return -1;
}

size_t SVG_Downsample(const double *x, const double *y, size_t n, double x0, double x1, int columns,
                      SVG_Column *out)
{
  if (columns < 1 || !(x1 > x0))
    return 0;
  for (int c = 0; c < columns; c++) {
    out[c].column = c;
    out[c].n = 0;
    out[c].run_start = 0;
  }
  double scale = columns / (x1 - x0);
  int after_gap = 1;
  for (size_t i = 0; i < n; i++) {
    if (!isfinite(x[i]) || !isfinite(y[i])) {
      after_gap = 1;
      continue;
    }
    if (x[i] < x0 || x[i] > x1)
      continue;
    int c = (int)((x[i] - x0) * scale);
    if (c >= columns)
      c = columns - 1; /* x == x1 */
    SVG_Column *o = &out[c];
    if (after_gap)
      o->run_start = 1;
    after_gap = 0;
    if (o->n == 0) {
      o->y_min = o->y_max = y[i];
      o->min_first = 1;
    } else if (y[i] < o->y_min) {
      o->y_min = y[i];
      o->min_first = 0; /* the highest so far came first */
    } else if (y[i] > o->y_max) {
      o->y_max = y[i];
      o->min_first = 1;
    }
    o->n++;
  }
  size_t k = 0;
  for (int c = 0; c < columns; c++)
    if (out[c].n)
      out[k++] = out[c];
  return k;
}

void SVG_Escape(FILE *f, const char *text)
{
  for (const char *p = text ? text : ""; *p; p++) {
    switch (*p) {
    case '&': fputs("&amp;", f); break;
    case '<': fputs("&lt;", f); break;
    case '>': fputs("&gt;", f); break;
    case '"': fputs("&quot;", f); break;
    default: fputc(*p, f);
    }
  }
}

/* ---------------------------------------------------------------- drawing */

typedef struct frame {
  double px0, px1, py0, py1; /* plot area, px */
  double x0, x1, y0, y1;     /* axis ranges */
} frame;

static double sx(const frame *g, double x) { return g->px0 + (x - g->x0) / (g->x1 - g->x0) * (g->px1 - g->px0); }
static double sy(const frame *g, double y) { return g->py1 - (y - g->y0) / (g->y1 - g->y0) * (g->py1 - g->py0); }

/* Rough width of a label in px at font size 12 (for the legend and tags; the
 * page uses a sans-serif font of about this width). */
static double text_px(const char *t, double size) { return (double)strlen(t) * size * 0.56; }

static void marker(FILE *f, SVG_Shape shape, double x, double y, double r)
{
  switch (shape) {
  case SVG_CIRCLE: fprintf(f, "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"%.1f\"/>", x, y, r); break;
  case SVG_TRIANGLE:
    fprintf(f, "<path d=\"M%.1f %.1fl%.1f %.1fh%.1fz\"/>", x, y - r * 1.2, r * 1.1, r * 1.9, -r * 2.2);
    break;
  case SVG_SQUARE: fprintf(f, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\"/>", x - r, y - r, 2 * r, 2 * r); break;
  case SVG_DIAMOND:
    fprintf(f, "<path d=\"M%.1f %.1fl%.1f %.1fl%.1f %.1fl%.1f %.1fz\"/>", x, y - r * 1.3, r * 1.3, r * 1.3, -r * 1.3,
            r * 1.3, -r * 1.3, -r * 1.3);
    break;
  case SVG_NONE: break;
  }
}

static void style_attrs(FILE *f, const SVG_Series *s, int for_line)
{
  if (for_line) {
    fprintf(f, " fill=\"none\" stroke=\"%s\" stroke-width=\"%.1f\" stroke-linejoin=\"round\"", s->colour,
            s->line_width);
    if (s->dash)
      fprintf(f, " stroke-dasharray=\"%s\"", s->dash);
  } else if (s->hollow) {
    fprintf(f, " fill=\"#fff\" stroke=\"%s\" stroke-width=\"1.3\"", s->colour);
  } else {
    fprintf(f, " fill=\"%s\" stroke=\"#fff\" stroke-width=\"0.5\"", s->colour);
  }
}

/* The distinct group values of s, in order of appearance (at most MAX_GROUPS;
 * points of further groups join the last). */
static int groups_of(const SVG_Series *s, double *g)
{
  if (!s->group) {
    g[0] = 0.0;
    return 1;
  }
  int n = 0;
  for (size_t i = 0; i < s->n; i++) {
    double v = s->group[i];
    if (!isfinite(v))
      continue;
    int k;
    for (k = 0; k < n && g[k] != v; k++)
      ;
    if (k == n && n < MAX_GROUPS)
      g[n++] = v;
  }
  return n ? n : 1;
}

static int in_group(const SVG_Series *s, size_t i, const double *g, int n_groups, int k)
{
  if (!s->group)
    return 1;
  double v = s->group[i];
  for (int j = 0; j < n_groups; j++)
    if (g[j] == v)
      return j == k;
  return k == n_groups - 1;
}

/* A line through the points of one group, broken at NANs. */
static size_t line_full(FILE *f, const frame *g, const SVG_Series *s, const double *grp, int n_groups, int k)
{
  int pen = 0;
  size_t drawn = 0;
  fputs("<path d=\"", f);
  for (size_t i = 0; i < s->n; i++) {
    if (!in_group(s, i, grp, n_groups, k) || (s->group && !isfinite(s->group[i])))
      continue;
    if (!isfinite(s->x[i]) || !isfinite(s->y[i]) || s->x[i] < g->x0 || s->x[i] > g->x1) {
      pen = 0;
      continue;
    }
    fprintf(f, "%s%.1f %.1f", pen ? "L" : "M", sx(g, s->x[i]), sy(g, s->y[i]));
    pen = 1;
    drawn++;
  }
  fputs("\"", f);
  style_attrs(f, s, 1);
  fputs("/>", f);
  return drawn;
}

/* One series downsampled: per pixel column, a bar from lowest to highest (the
 * markers), and a line visiting both in the order they came. */
static size_t series_columns(FILE *f, const frame *g, const SVG_Series *s, const double *grp, int n_groups,
                             SVG_Column *col, int columns, double *gx, double *gy)
{
  size_t drawn = 0;
  double cw = (g->px1 - g->px0) / columns;
  for (int k = 0; k < n_groups; k++) {
    size_t m = 0;
    for (size_t i = 0; i < s->n; i++)
      if (in_group(s, i, grp, n_groups, k) && !(s->group && !isfinite(s->group[i]))) {
        gx[m] = s->x[i];
        gy[m++] = s->y[i];
      }
    size_t nc = SVG_Downsample(gx, gy, m, g->x0, g->x1, columns, col);
    drawn += nc;
    if (s->shape != SVG_NONE) {
      /* The lowest and the highest of each column as dots: round for circles, square otherwise. */
      fputs("<path d=\"", f);
      for (size_t c = 0; c < nc; c++) {
        double x = g->px0 + (col[c].column + 0.5) * cw;
        fprintf(f, "M%.1f %.1fh0", x, sy(g, col[c].y_min));
        if (sy(g, col[c].y_min) - sy(g, col[c].y_max) >= 1.0)
          fprintf(f, "M%.1f %.1fh0", x, sy(g, col[c].y_max));
      }
      fprintf(f, "\" fill=\"none\" stroke=\"%s\" stroke-width=\"%.1f\" stroke-linecap=\"%s\"/>", s->colour,
              s->shape == SVG_CIRCLE ? 4.2 : 3.6, s->shape == SVG_CIRCLE ? "round" : "square");
    }
    if (s->line_width > 0.0) {
      fputs("<path d=\"", f);
      for (size_t c = 0; c < nc; c++) {
        double x = g->px0 + (col[c].column + 0.5) * cw;
        double first = col[c].min_first ? col[c].y_min : col[c].y_max;
        double second = col[c].min_first ? col[c].y_max : col[c].y_min;
        int join = c > 0 && !col[c].run_start;
        fprintf(f, "%s%.1f %.1f", join ? "L" : "M", x, sy(g, first));
        if (second != first)
          fprintf(f, "L%.1f %.1f", x, sy(g, second));
      }
      fputs("\"", f);
      style_attrs(f, s, 1);
      fputs("/>", f);
    }
  }
  return drawn;
}

static size_t series_full(FILE *f, const frame *g, const SVG_Series *s, const double *grp, int n_groups)
{
  size_t lines = 0, marks = 0;
  if (s->line_width > 0.0)
    for (int k = 0; k < n_groups; k++)
      lines += line_full(f, g, s, grp, n_groups, k);
  if (s->shape != SVG_NONE) {
    fputs("<g", f);
    style_attrs(f, s, 0);
    fputs(">", f);
    double r = s->shape == SVG_CIRCLE ? 2.4 : 2.6;
    for (size_t i = 0; i < s->n; i++) {
      if (!isfinite(s->x[i]) || !isfinite(s->y[i]) || s->x[i] < g->x0 || s->x[i] > g->x1)
        continue;
      marker(f, s->shape, sx(g, s->x[i]), sy(g, s->y[i]), r);
      marks++;
    }
    fputs("</g>", f);
  }
  return s->shape != SVG_NONE ? marks : lines;
}

/* The legend's sample of a series: a short line and/or its marker (as drawn:
 * per pixel column the markers become dots). */
static void legend_sample(FILE *f, const SVG_Series *s, double x, double y, int columns_mode)
{
  if (s->line_width > 0.0) {
    fprintf(f, "<path d=\"M%.1f %.1fh26\"", x, y);
    style_attrs(f, s, 1);
    fputs("/>", f);
  }
  if (s->shape == SVG_NONE)
    return;
  if (columns_mode) {
    fprintf(f, "<path d=\"M%.1f %.1fh0\" stroke=\"%s\" stroke-width=\"%.1f\" stroke-linecap=\"%s\"/>", x + 13, y,
            s->colour, s->shape == SVG_CIRCLE ? 5.0 : 4.4, s->shape == SVG_CIRCLE ? "round" : "square");
    return;
  }
  fputs("<g", f);
  style_attrs(f, s, 0);
  fputs(">", f);
  marker(f, s->shape, x + 13, y, 3.2);
  fputs("</g>", f);
}

static void number_label(double v, int decimals, char *buf, size_t size)
{
  if (fabs(v) < 1e-12)
    v = 0.0; /* no "-0" */
  snprintf(buf, size, "%.*f", decimals, v);
}

/* Local time; the date only at the first tick of each day. */
static void time_label(double v, int *last_day, char *buf, size_t size)
{
  time_t t = (time_t)llround(v);
  struct tm tm;
  localtime_r(&t, &tm);
  int day = tm.tm_year * 400 + tm.tm_yday;
  strftime(buf, size, day != *last_day ? "%m-%d %H:%M" : "%H:%M", &tm);
  *last_day = day;
}

int SVG_WriteChart(FILE *f, const SVG_Chart *c, SVG_Result *r)
{
  SVG_Result res = {0, 0, 0, 0};
  double W = c->width, H = c->height;
  /* Legend layout first: it sets the top margin. */
  double left = 72.0, right = 18.0, bottom = 48.0;
  double lx = left, rows = 1;
  int items = c->n_series + (c->y_band ? 1 : 0);
  double item_x[32], item_row[32];
  for (int i = 0; i < items && i < 32; i++) {
    const char *name = i < c->n_series ? c->series[i].name : c->y_band->name;
    double w = 34.0 + text_px(name, 12) + 18.0;
    if (lx + w > W - right && lx > left) {
      lx = left;
      rows++;
    }
    item_x[i] = lx;
    item_row[i] = rows;
    lx += w;
  }
  double top = 10.0 + 18.0 * rows + (c->n_marks ? 30.0 : 8.0);
  frame g = {left, W - right, top, H - bottom, c->x0, c->x1, 0.0, 1.0};
  if (!(g.x1 > g.x0))
    g.x1 = g.x0 + 1.0;
  int columns = (int)(g.px1 - g.px0);
  if (columns < 1)
    columns = 1;
  res.columns = columns;

  /* y range over what is drawn */
  double ymin = INFINITY, ymax = -INFINITY;
  for (int i = 0; i < c->n_series; i++) {
    const SVG_Series *s = &c->series[i];
    for (size_t k = 0; k < s->n; k++)
      if (isfinite(s->x[k]) && isfinite(s->y[k]) && s->x[k] >= g.x0 && s->x[k] <= g.x1) {
        ymin = fmin(ymin, s->y[k]);
        ymax = fmax(ymax, s->y[k]);
        res.points++;
      }
  }
  if (c->y_band) {
    ymin = fmin(ymin, c->y_band->lo);
    ymax = fmax(ymax, c->y_band->hi);
  }
  if (c->y_from_zero) {
    ymin = fmin(ymin, 0.0);
    ymax = fmax(ymax, 0.0);
  }
  if (!isfinite(ymin) || !isfinite(ymax)) {
    ymin = 0.0;
    ymax = 1.0;
  }
  SVG_Ticks yt;
  SVG_NiceTicks(ymin, ymax, 6, &yt);
  g.y0 = yt.lo;
  g.y1 = yt.lo + (yt.count - 1) * yt.step;
  SVG_Ticks xt;
  if (c->time_axis) {
    struct tm tm;
    time_t t0 = (time_t)g.x0;
    localtime_r(&t0, &tm);
    SVG_TimeTicks(g.x0, g.x1, (int)((g.px1 - g.px0) / 90.0), tm.tm_gmtoff, &xt);
  } else {
    SVG_NiceTicks(g.x0, g.x1, (int)((g.px1 - g.px0) / 70.0), &xt);
  }

  size_t most = 1;
  for (int i = 0; i < c->n_series; i++)
    most = c->series[i].n > most ? c->series[i].n : most;
  SVG_Column *col = malloc((size_t)columns * sizeof *col);
  double *gx = malloc(most * sizeof *gx), *gy = malloc(most * sizeof *gy);
  if (!col || !gx || !gy) {
    free(col), free(gx), free(gy);
    return -1;
  }

  fprintf(f, "<svg xmlns=\"http://www.w3.org/2000/svg\" class=\"chart\" id=\"%s\" viewBox=\"0 0 %.0f %.0f\" "
             "width=\"%.0f\" height=\"%.0f\" role=\"img\" aria-labelledby=\"%s-title\" "
             "font-family=\"DejaVu Sans, Liberation Sans, Arial, sans-serif\" font-size=\"12\">\n",
          c->id, W, H, W, H, c->id);
  fprintf(f, "<title id=\"%s-title\">", c->id);
  SVG_Escape(f, c->title);
  fputs("</title>\n", f);
  fprintf(f, "<defs><pattern id=\"%s-hatch\" width=\"7\" height=\"7\" patternUnits=\"userSpaceOnUse\" "
             "patternTransform=\"rotate(45)\"><rect width=\"7\" height=\"7\" fill=\"#e4efe0\"/>"
             "<path d=\"M0 0V7\" stroke=\"#9cbf90\" stroke-width=\"2\"/></pattern>"
             "<clipPath id=\"%s-clip\"><rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\"/></clipPath></defs>\n",
          c->id, c->id, g.px0 - 4, g.py0 - 4, g.px1 - g.px0 + 8, g.py1 - g.py0 + 8);
  fprintf(f, "<rect width=\"%.0f\" height=\"%.0f\" fill=\"#fff\"/>\n", W, H);

  /* shift bands */
  for (int i = 0; i < c->n_x_bands; i++) {
    const SVG_Band *b = &c->x_bands[i];
    double a = sx(&g, fmax(b->lo, g.x0)), e = sx(&g, fmin(b->hi, g.x1));
    if (e <= a)
      continue;
    if (i % 2)
      fprintf(f, "<rect class=\"shift-band\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"#f0f0f0\"/>",
              a, g.py0, e - a, g.py1 - g.py0);
    fprintf(f, "<text x=\"%.1f\" y=\"%.1f\" font-size=\"10\" fill=\"#555\">", a + 3, g.py1 - 4);
    SVG_Escape(f, b->name);
    fputs("</text>\n", f);
  }
  /* window band */
  if (c->y_band) {
    double a = sy(&g, c->y_band->hi), b = sy(&g, c->y_band->lo);
    fprintf(f, "<g class=\"band\"><rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"url(#%s-hatch)\"/>"
               "<path d=\"M%.1f %.1fH%.1fM%.1f %.1fH%.1f\" stroke=\"#3d7a2e\" stroke-width=\"1.2\" "
               "stroke-dasharray=\"5 3\"/></g>\n",
            g.px0, a, g.px1 - g.px0, b - a, c->id, g.px0, a, g.px1, g.px0, b, g.px1);
  }
  /* grid and tick labels */
  fputs("<g class=\"grid\" stroke=\"#d9d9d9\" stroke-width=\"1\">", f);
  for (int i = 0; i < yt.count; i++)
    fprintf(f, "<path d=\"M%.1f %.1fH%.1f\"/>", g.px0, sy(&g, yt.lo + i * yt.step), g.px1);
  for (int i = 0; i < xt.count; i++) {
    double x = xt.lo + i * xt.step;
    if (x >= g.x0 && x <= g.x1)
      fprintf(f, "<path d=\"M%.1f %.1fV%.1f\"/>", sx(&g, x), g.py0, g.py1);
  }
  fputs("</g>\n", f);
  char buf[64];
  fputs("<g class=\"y-ticks\" text-anchor=\"end\" fill=\"#222\">", f);
  for (int i = 0; i < yt.count; i++) {
    double v = yt.lo + i * yt.step;
    number_label(v, yt.decimals, buf, sizeof buf);
    fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\">%s</text>", g.px0 - 6, sy(&g, v) + 4, buf);
  }
  fputs("</g>\n<g class=\"x-ticks\" text-anchor=\"middle\" fill=\"#222\">", f);
  int last_day = -1;
  for (int i = 0; i < xt.count; i++) {
    double x = xt.lo + i * xt.step;
    if (x < g.x0 || x > g.x1)
      continue;
    if (c->time_axis)
      time_label(x, &last_day, buf, sizeof buf);
    else
      number_label(x, xt.decimals, buf, sizeof buf);
    fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\">%s</text>", sx(&g, x), g.py1 + 16, buf);
  }
  fputs("</g>\n", f);
  /* axes and their labels */
  fprintf(f, "<path class=\"axis\" d=\"M%.1f %.1fV%.1fH%.1f\" fill=\"none\" stroke=\"#333\" stroke-width=\"1.2\"/>\n",
          g.px0, g.py0, g.py1, g.px1);
  fprintf(f, "<text class=\"axis-label\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\" fill=\"#222\">", 0.5 * (g.px0 + g.px1),
          H - 10);
  SVG_Escape(f, c->x_label);
  fprintf(f, "</text>\n<text class=\"axis-label\" transform=\"translate(16 %.1f) rotate(-90)\" text-anchor=\"middle\" "
             "fill=\"#222\">",
          0.5 * (g.py0 + g.py1));
  SVG_Escape(f, c->y_label);
  fputs("</text>\n", f);

  /* dresses and alerts: lines across the plot, tags above it in two staggered rows */
  if (c->n_marks) {
    fputs("<g class=\"marks\">", f);
    double last_tag[2] = {-1e9, -1e9};
    for (int i = 0; i < c->n_marks; i++) {
      const SVG_Mark *m = &c->marks[i];
      if (!(m->x >= g.x0 && m->x <= g.x1))
        continue;
      double x = sx(&g, m->x);
      const char *colour = m->kind == 0 ? "#333" : m->kind == 2 ? "#7a0019" : "#b3001b";
      fprintf(f, "<g class=\"mark mark-%s\"><title>", m->kind == 0 ? "dress" : "alert");
      SVG_Escape(f, m->title);
      fprintf(f, "</title><path d=\"M%.1f %.1fV%.1f\" stroke=\"%s\" stroke-width=\"%s\" stroke-dasharray=\"%s\"%s/>",
              x, g.py0 - 3, g.py1, colour, m->kind == 0 ? "1.6" : "1", m->kind == 0 ? "8 3" : "2 3",
              m->kind == 0 ? "" : " stroke-opacity=\"0.7\"");
      double w = text_px(m->tag, 10) + 9;
      int row = x - last_tag[0] >= w ? 0 : x - last_tag[1] >= w ? 1 : -1;
      if (row >= 0) {
        last_tag[row] = x;
        fprintf(f, "<text x=\"%.1f\" y=\"%.1f\" font-size=\"10\" text-anchor=\"middle\" fill=\"%s\" "
                   "font-weight=\"bold\">",
                x, g.py0 - 18 + 12 * row, colour);
        SVG_Escape(f, m->tag);
        fputs("</text>", f);
      }
      fputs("</g>", f);
    }
    fputs("</g>\n", f);
  }

  /* data */
  int big = 0;
  for (int i = 0; i < c->n_series; i++) {
    const SVG_Series *s = &c->series[i];
    size_t m = 0;
    for (size_t k = 0; k < s->n; k++)
      m += isfinite(s->x[k]) && isfinite(s->y[k]);
    if (m > (size_t)columns)
      big = 1;
  }
  res.downsampled = big;
  fprintf(f, "<g clip-path=\"url(#%s-clip)\">\n", c->id);
  for (int i = 0; i < c->n_series; i++) {
    const SVG_Series *s = &c->series[i];
    double grp[MAX_GROUPS];
    int n_groups = groups_of(s, grp);
    size_t m = 0;
    for (size_t k = 0; k < s->n; k++)
      m += isfinite(s->x[k]) && isfinite(s->y[k]) && s->x[k] >= g.x0 && s->x[k] <= g.x1;
    fprintf(f, "<g class=\"series\" data-series=\"%s\" data-points=\"%zu\" data-mode=\"%s\">", s->key, m,
            big ? "columns" : "points");
    size_t d = big ? series_columns(f, &g, s, grp, n_groups, col, columns, gx, gy)
                   : series_full(f, &g, s, grp, n_groups);
    res.drawn += d;
    fputs("</g>\n", f);
  }
  fputs("</g>\n", f);

  /* legend */
  fputs("<g class=\"legend\" fill=\"#222\">", f);
  for (int i = 0; i < items && i < 32; i++) {
    double x = item_x[i], y = 10.0 + 18.0 * (item_row[i] - 1) + 8.0;
    const char *name;
    if (i < c->n_series) {
      legend_sample(f, &c->series[i], x, y, big);
      name = c->series[i].name;
    } else {
      fprintf(f, "<rect x=\"%.1f\" y=\"%.1f\" width=\"26\" height=\"11\" fill=\"url(#%s-hatch)\" stroke=\"#3d7a2e\" "
                 "stroke-dasharray=\"5 3\"/>",
              x, y - 5.5, c->id);
      name = c->y_band->name;
    }
    fprintf(f, "<text class=\"legend-item\" x=\"%.1f\" y=\"%.1f\">", x + 32, y + 4);
    SVG_Escape(f, name);
    fputs("</text>", f);
  }
  fputs("</g>\n</svg>\n", f);
  free(col), free(gx), free(gy);
  if (r)
    *r = res;
  return 0;
}
