/* test_svg.c: Criterion tests of the chart helpers (daemon/svg.c): nice ticks, time ticks, downsampling, SVG. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "svg.h"

static void expect_ticks(double lo, double hi, int max, double first, double step, int count, int decimals)
{
  SVG_Ticks t;
  cr_assert_eq(SVG_NiceTicks(lo, hi, max, &t), 0);
  cr_expect_float_eq(t.lo, first, 1e-9 * step, "[%g, %g] max %d: first %g", lo, hi, max, t.lo);
  cr_expect_float_eq(t.step, step, 1e-12 * step, "[%g, %g] max %d: step %g", lo, hi, max, t.step);
  cr_expect_eq(t.count, count, "[%g, %g] max %d: count %d", lo, hi, max, t.count);
  cr_expect_eq(t.decimals, decimals, "[%g, %g] max %d: decimals %d", lo, hi, max, t.decimals);
}

Test(svg, nice_ticks_worked_examples)
{
  /* Steps are 1, 2, 2.5 or 5 times a power of ten ("nice numbers"; common
   * practice of chart axes, no source), the fewest ticks up to max. */
  expect_ticks(0, 1, 6, 0, 0.2, 6, 1);
  expect_ticks(0, 406, 10, 0, 50, 10, 0);
  expect_ticks(13.2, 87.9, 6, 0, 20, 6, 0);
  expect_ticks(0.0012, 0.0047, 5, 0.001, 0.001, 5, 3);
  expect_ticks(-3, 7, 6, -5, 2.5, 6, 1);         /* step 2 would need 7 ticks */
  expect_ticks(5, 5, 6, 4.5, 0.25, 5, 2);        /* an empty range is widened by 10 % */
  expect_ticks(0, 0, 6, -1, 0.5, 5, 1);
  expect_ticks(17.5, 17.5, 6, 15, 1, 6, 0);        /* 15.75..19.25 */
  expect_ticks(0, 25, 6, 0, 5, 6, 0);
  expect_ticks(0, 2000, 6, 0, 500, 5, 0);
  expect_ticks(1709629200, 1709629200 + 8 * 3600, 8, 1709625000, 5000, 8, 0);
  expect_ticks(250, 0, 6, 0, 50, 6, 0);          /* given the wrong way round */
  expect_ticks(-0.0029, 0.0043, 2, -0.005, 0.005, 3, 3); /* around 0: three ticks however few are asked */
  SVG_Ticks t;
  cr_expect_eq(SVG_NiceTicks(NAN, 1, 6, &t), -1);
  cr_expect_eq(SVG_NiceTicks(0, INFINITY, 6, &t), -1);
}

Test(svg, nice_ticks_properties)
{
  /* Over many ranges: the ticks cover the data, never exceed max, use a nice
   * step, and print exactly with their decimals. */
  srand(7);
  for (int i = 0; i < 20000; i++) {
    double scale = pow(10.0, rand() % 13 - 6);
    double a = (rand() / (double)RAND_MAX - 0.3) * scale, b = a + rand() / (double)RAND_MAX * scale;
    int max = 3 + rand() % 9;
    SVG_Ticks t;
    cr_assert_eq(SVG_NiceTicks(a, b, max, &t), 0);
    double last = t.lo + (t.count - 1) * t.step;
    cr_assert(t.count >= 2 && t.count <= max, "[%g, %g] max %d: %d ticks", a, b, max, t.count);
    cr_assert(t.step >= (b - a) / (max - 1) * (1 - 1e-9), "no finer than the range allows");
    cr_assert(t.lo <= a + 1e-9 * t.step && last >= b - 1e-9 * t.step, "[%g, %g]: axis %g..%g", a, b, t.lo, last);
    double m = t.step / pow(10.0, floor(log10(t.step) + 1e-9));
    cr_assert(fabs(m - 1) < 1e-9 || fabs(m - 2) < 1e-9 || fabs(m - 2.5) < 1e-9 || fabs(m - 5) < 1e-9,
              "step %g is not nice", t.step);
    for (int k = 0; k < t.count; k++) {
      double v = t.lo + k * t.step;
      char buf[64];
      snprintf(buf, sizeof buf, "%.*f", t.decimals, v);
      cr_assert(fabs(strtod(buf, NULL) - v) < 1e-6 * t.step, "tick %.17g printed \"%s\"", v, buf);
    }
  }
}

Test(svg, time_ticks_on_local_hours)
{
  SVG_Ticks t;
  double t0 = 1709629200.0 + 1234.0; /* 2024-03-05 09:20:34 UTC */
  double t1 = t0 + 8 * 3600.0;
  cr_assert_eq(SVG_TimeTicks(t0, t1, 9, 0, &t), 0);
  cr_expect_float_eq(t.step, 3600.0, 0.0);
  cr_expect_float_eq(t.lo, 1709629200.0 + 3600.0, 0.0, "10:00 UTC");
  cr_expect_eq(t.count, 8);
  /* one hour east of UTC: ticks at whole local hours, which are whole UTC hours too */
  cr_assert_eq(SVG_TimeTicks(t0, t1, 5, 3600, &t), 0);
  cr_expect_float_eq(t.step, 7200.0, 0.0);
  cr_expect_float_eq(fmod(t.lo + 3600.0, 7200.0), 0.0, 0.0, "at even local hours");
  cr_expect(t.lo >= t0 && t.lo + (t.count - 1) * t.step <= t1);
  /* half an hour east (India): whole local hours are half past in UTC */
  cr_assert_eq(SVG_TimeTicks(t0, t1, 9, 19800, &t), 0);
  cr_expect_float_eq(fmod(t.lo + 19800.0, 3600.0), 0.0, 0.0);
  /* a few minutes, and several weeks */
  cr_assert_eq(SVG_TimeTicks(t0, t0 + 600.0, 6, 0, &t), 0);
  cr_expect_float_eq(t.step, 120.0, 0.0);
  cr_assert_eq(SVG_TimeTicks(t0, t0 + 40 * 86400.0, 8, 0, &t), 0);
  cr_expect_float_eq(t.step, 604800.0, 0.0);
  cr_expect_eq(SVG_TimeTicks(NAN, t1, 5, 0, &t), -1);
}

Test(svg, downsample_worked_example)
{
  /* ten points into five columns over [0, 10): two points a column */
  double x[] = {0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11};
  double y[] = {5, 1, 2, 8, NAN, 3, 9, 9, 4, 6, 7, 100};
  SVG_Column c[5];
  size_t n = SVG_Downsample(x, y, 12, 0.0, 10.0, 5, c);
  cr_assert_eq(n, 5);
  struct { int column; double lo, hi; int min_first, run_start; size_t n; } want[] = {
      {0, 1, 5, 0, 1, 2},  /* 5 then 1: the highest came first */
      {1, 2, 8, 1, 0, 2},
      {2, 3, 3, 1, 1, 1},  /* x=4 is NAN: x=5 starts a new run */
      {3, 9, 9, 1, 0, 2},
      {4, 4, 7, 1, 0, 3},  /* x=10 == x1 joins the last column; x=11 is outside */
  };
  for (int i = 0; i < 5; i++) {
    cr_expect_eq(c[i].column, want[i].column, "column %d", i);
    cr_expect_float_eq(c[i].y_min, want[i].lo, 0.0, "column %d", i);
    cr_expect_float_eq(c[i].y_max, want[i].hi, 0.0, "column %d", i);
    cr_expect_eq(c[i].min_first, want[i].min_first, "column %d", i);
    cr_expect_eq(c[i].run_start, want[i].run_start, "column %d", i);
    cr_expect_eq(c[i].n, want[i].n, "column %d", i);
  }
  /* empty columns are left out */
  double xs[] = {0.5, 9.5};
  double ys[] = {1, 2};
  SVG_Column ten[10];
  n = SVG_Downsample(xs, ys, 2, 0.0, 10.0, 10, ten);
  cr_expect_eq(n, 2);
  cr_expect_eq(ten[0].column, 0);
  cr_expect_eq(ten[1].column, 9);
  cr_expect_eq(SVG_Downsample(xs, ys, 2, 5.0, 5.0, 10, c), 0, "an empty x range draws nothing");
}

Test(svg, downsample_keeps_every_extreme)
{
  /* Against brute force on a large series with spikes. */
  enum { N = 100000, COLS = 977 };
  static double x[N], y[N];
  static SVG_Column c[COLS];
  srand(11);
  for (int i = 0; i < N; i++) {
    x[i] = 1000.0 + i * 0.37;
    y[i] = sin(i * 0.001) * 100.0 + (rand() % 1000 == 0 ? 5000.0 : 0.0) + rand() / (double)RAND_MAX;
  }
  double x0 = 1000.0, x1 = 1000.0 + (N - 1) * 0.37;
  size_t n = SVG_Downsample(x, y, N, x0, x1, COLS, c);
  cr_assert_eq(n, COLS);
  size_t total = 0;
  for (size_t k = 0; k < n; k++) {
    double lo = INFINITY, hi = -INFINITY;
    for (int i = 0; i < N; i++) {
      int col = (int)((x[i] - x0) * COLS / (x1 - x0));
      if (col >= COLS)
        col = COLS - 1;
      if (col == c[k].column) {
        lo = fmin(lo, y[i]);
        hi = fmax(hi, y[i]);
      }
    }
    cr_assert_float_eq(c[k].y_min, lo, 0.0);
    cr_assert_float_eq(c[k].y_max, hi, 0.0);
    total += c[k].n;
  }
  cr_expect_eq(total, N, "every point in one column");
}

static char *chart_text(const SVG_Chart *c, SVG_Result *r)
{
  char *buf = NULL;
  size_t len = 0;
  FILE *f = open_memstream(&buf, &len);
  cr_assert_eq(SVG_WriteChart(f, c, r), 0);
  fclose(f);
  return buf;
}

static int count(const char *text, const char *what)
{
  int n = 0;
  for (const char *p = text; (p = strstr(p, what)); p++)
    n++;
  return n;
}

Test(svg, chart_elements)
{
  double x[50], y[50], ref[50], grp[50];
  for (int i = 0; i < 50; i++) {
    x[i] = i + 1;
    y[i] = i == 7 ? NAN : 20.0 + i * 0.1;
    ref[i] = i % 5 == 4 ? 35.0 : 22.0;
    grp[i] = i % 5 == 4 ? 5.0 : 15.0;
  }
  SVG_Series s[] = {
      {"specific energy u", "u", x, y, NULL, 50, "#1f4e8c", NULL, 0.0, SVG_CIRCLE, 0},
      {"reference <u_ref> & co", "ref", x, ref, grp, 50, "#2e6b2a", "6 3", 2.0, SVG_NONE, 0},
  };
  SVG_Band band = {15, 20, "window 15-20"};
  SVG_Mark marks[] = {{10.5, "D1", "dress after pass 10", 0}, {30, "A1", "dulling raised", 1}};
  SVG_Chart c = {"c1", "A test chart", "pass", "u, J/mm3", 800, 300, 0, 51, 0, 0, 1, s, 2, &band, NULL, 0, marks, 2};
  SVG_Result r;
  char *t = chart_text(&c, &r);
  cr_expect_eq(count(t, "<svg"), 1);
  cr_expect_eq(count(t, "<circle"), 49 + 1, "one marker a point (the NAN left out), and the legend's");
  cr_expect_eq(r.points, 99);
  cr_expect_eq(r.downsampled, 0);
  cr_expect_not_null(strstr(t, "data-series=\"u\" data-points=\"49\" data-mode=\"points\""));
  cr_expect_not_null(strstr(t, "reference &lt;u_ref&gt; &amp; co"), "text is escaped");
  cr_expect_null(strstr(t, "<u_ref>"));
  cr_expect_not_null(strstr(t, "stroke-dasharray=\"6 3\""));
  cr_expect_eq(count(t, "class=\"tick\""), 6 + 5, "x: 0..50 by 10 (no tick past 51); y: 0..40 by 10");
  cr_expect_not_null(strstr(t, ">D1</text>"));
  cr_expect_not_null(strstr(t, ">A1</text>"));
  cr_expect_not_null(strstr(t, "<title>dress after pass 10</title>"));
  cr_expect_not_null(strstr(t, "url(#c1-hatch)"), "the window band");
  cr_expect_eq(count(t, "class=\"legend-item\""), 3, "two series and the band");
  /* the reference: one line per group (two depths) */
  const char *ref_group = strstr(t, "data-series=\"ref\"");
  cr_assert_not_null(ref_group);
  const char *end = strstr(ref_group, "</g>");
  int paths = 0;
  for (const char *p = ref_group; (p = strstr(p, "<path")) && p < end; p++)
    paths++;
  cr_expect_eq(paths, 2);
  free(t);
}

Test(svg, chart_downsampled_when_dense)
{
  enum { N = 30000 };
  static double x[N], y[N];
  for (int i = 0; i < N; i++) {
    x[i] = i + 1;
    y[i] = 500.0 + (i % 10) * 10.0;
  }
  SVG_Series s[] = {{"mean net power", "p", x, y, NULL, N, "#1f4e8c", NULL, 0.0, SVG_CIRCLE, 0}};
  SVG_Chart c = {"c2", "dense", "pass", "W", 1060, 300, 0, N + 1, 0, 0, 1, s, 1, NULL, NULL, 0, NULL, 0};
  SVG_Result r;
  char *t = chart_text(&c, &r);
  cr_expect_eq(r.downsampled, 1);
  cr_expect_eq(r.drawn, (size_t)r.columns, "one column of dots per pixel column");
  cr_expect_eq(count(t, "<circle"), 0);
  cr_expect_not_null(strstr(t, "data-mode=\"columns\""));
  cr_expect_lt(strlen(t), 60000, "%zu bytes for %d points", strlen(t), N);
  free(t);
}
