/* test_robust.c: the robust and least-squares estimators against published data sets and definitions. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "passgen.h"
#include "robust.h"

static int cmp(const void *a, const void *b)
{
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

/* Selection must agree with a full sort (C library qsort) for every rank. */
Test(robust, select_agrees_with_qsort)
{
  PGN_Rng r;
  PGN_Seed(&r, 11);
  double x[257], sorted[257], work[257];
  for (unsigned n = 1; n <= 257; n += 16) {
    for (unsigned i = 0; i < n; i++)
      x[i] = floor(PGN_Uniform(&r) * 50.0); /* many ties */
    memcpy(sorted, x, n * sizeof(double));
    qsort(sorted, n, sizeof(double), cmp);
    for (unsigned k = 0; k < n; k++) {
      memcpy(work, x, n * sizeof(double));
      cr_assert_eq(RBS_Select(work, n, k), sorted[k], "n %u k %u", n, k);
    }
    memcpy(work, x, n * sizeof(double));
    double med = n % 2 ? sorted[n / 2] : 0.5 * (sorted[n / 2 - 1] + sorted[n / 2]);
    cr_assert_eq(RBS_Median(work, n), med);
  }
  cr_expect(isnan(RBS_Median(work, 0)));
}

/* Orders that defeat a naive quickselect (sorted, reversed, all equal, one
 * value apart from ties, organ pipe), at the size of a full Theil-Sen window
 * (64 passes: 2016 slopes): the k-th value as a full sort gives it, with the
 * smaller ones before it and the larger after (RBS_Median relies on that). */
Test(robust, select_orders_and_ties)
{
  enum { N = 2016 };
  static double x[N], sorted[N], work[N];
  PGN_Rng r;
  PGN_Seed(&r, 5);
  for (int shape = 0; shape < 6; shape++) {
    for (unsigned i = 0; i < N; i++) {
      switch (shape) {
      case 0: x[i] = i; break;
      case 1: x[i] = N - i; break;
      case 2: x[i] = 0.25; break;
      case 3: x[i] = i == 700 ? -1.0 : 3.0; break;
      case 4: x[i] = i < N / 2 ? i : N - i; break;
      default: x[i] = floor(PGN_Uniform(&r) * 3.0); break;
      }
    }
    memcpy(sorted, x, sizeof x);
    qsort(sorted, N, sizeof(double), cmp);
    for (unsigned k = 0; k < N; k += 37) {
      memcpy(work, x, sizeof x);
      double v = RBS_Select(work, N, k);
      cr_assert_eq(v, sorted[k], "shape %d k %u", shape, k);
      for (unsigned i = 0; i < N; i++)
        cr_assert(i < k ? work[i] <= v : i > k ? work[i] >= v : work[i] == v, "shape %d k %u at %u", shape, k, i);
    }
  }
}

/* Anscombe, "Graphs in statistical analysis", The American Statistician 27 (1973)
 * (data and results from memory): data set I has the least-squares line
 * y = 3.00 + 0.500 x; the exact figures 3.0000909 and 0.5000909 were confirmed
 * with Debian's python3-scipy (scipy.stats.linregress). */
static const double ans_x[11] = {10, 8, 13, 9, 11, 14, 6, 4, 12, 7, 5};
static const double ans_y1[11] = {8.04, 6.95, 7.58, 8.81, 8.33, 9.96, 7.24, 4.26, 10.84, 4.82, 5.68};
static const double ans_y3[11] = {7.46, 6.77, 12.74, 7.11, 7.81, 8.84, 6.08, 5.39, 8.15, 6.42, 5.73};

Test(robust, least_squares_anscombe)
{
  double b, a;
  cr_assert_eq(RBS_LeastSquares(ans_x, ans_y1, 11, &b, &a), 0);
  cr_expect_float_eq(b, 0.5000909090909091, 1e-12);
  cr_expect_float_eq(a, 3.0000909090909103, 1e-12);
  /* Data set III has the same least-squares line although one point is an outlier. */
  cr_assert_eq(RBS_LeastSquares(ans_x, ans_y3, 11, &b, &a), 0);
  cr_expect_float_eq(b, 0.500, 0.001);
  cr_expect_float_eq(a, 3.00, 0.01);
  double same[3] = {2, 2, 2}, y[3] = {1, 2, 3};
  cr_expect_eq(RBS_LeastSquares(same, y, 3, &b, &a), -1);
  cr_expect_eq(RBS_LeastSquares(same, y, 1, &b, &a), -1);
}

/* Theil-Sen (Sen, JASA 63, 1968: median of pairwise slopes). In Anscombe's set
 * III ten points lie on one line and one is an outlier: the Theil-Sen slope
 * ignores it. Slope 0.34555... as given by scipy.stats.theilslopes (Debian's
 * python3-scipy); the line's intercept is 4.00 (Anscombe, from memory). */
Test(robust, theil_sen_anscombe_outlier)
{
  double work[64], b, a;
  cr_assert_eq(RBS_TheilSenWork(11), 55);
  cr_assert_eq(RBS_TheilSen(ans_x, ans_y3, 11, work, 64, &b, &a), 0);
  cr_expect_float_eq(b, 0.3455555555555555, 1e-12, "slope %.15g", b);
  cr_expect_float_eq(a, 4.00, 0.01, "intercept %g", a);
  cr_expect_eq(RBS_TheilSen(ans_x, ans_y3, 11, work, 54, &b, &a), -1, "work too short");
  /* Exact line: slope and intercept recovered exactly. */
  double x[5] = {0, 1, 2, 3, 4}, y[5];
  for (int i = 0; i < 5; i++)
    y[i] = 1.5 + 0.25 * x[i];
  cr_assert_eq(RBS_TheilSen(x, y, 5, work, 64, &b, &a), 0);
  cr_expect_float_eq(b, 0.25, 1e-15);
  cr_expect_float_eq(a, 1.5, 1e-15);
}

/* MAD with the normal consistency factor 1/Phi^-1(3/4) = 1.482602 (standard;
 * value confirmed with scipy.stats.norm.ppf). For Anscombe I:
 * scipy.stats.median_abs_deviation(y1, scale='normal') = 1.8236007. */
Test(robust, mad_normal_scale)
{
  double work[11];
  cr_expect_float_eq(RBS_Mad(ans_y1, 11, work), 1.823600728761891, 1e-9);
  /* Large normal sample: the scaled MAD estimates sigma. */
  static double x[20001], w[20001];
  PGN_Rng r;
  PGN_Seed(&r, 5);
  for (int i = 0; i < 20001; i++)
    x[i] = 3.0 + 0.7 * PGN_Normal(&r);
  cr_expect_float_eq(RBS_Mad(x, 20001, w), 0.7, 0.02);
}

Test(robust, running_median_and_ewma)
{
  RBS_RunMedian m;
  RBS_RunMedianInit(&m, 5);
  cr_expect_eq(RBS_RunMedianPush(&m, 1.0), 1.0);
  cr_expect_eq(RBS_RunMedianPush(&m, 3.0), 2.0);
  cr_expect_eq(RBS_RunMedianPush(&m, 100.0), 3.0); /* a single spike does not pass */
  cr_expect_eq(RBS_RunMedianPush(&m, 2.0), 2.5);
  cr_expect_eq(RBS_RunMedianPush(&m, 2.0), 2.0);
  cr_expect_eq(RBS_RunMedianPush(&m, 2.0), 2.0); /* the 1 has left the window */
  RBS_Ewma e;
  RBS_EwmaInit(&e, 0.25);
  cr_expect_eq(RBS_EwmaPush(&e, 4.0), 4.0);
  cr_expect_eq(RBS_EwmaPush(&e, 8.0), 5.0);
}

/* Page's CUSUM: S = max(0, S + z - k), alarm when S > h. */
Test(robust, cusum_recursion)
{
  RBS_Cusum c;
  RBS_CusumInit(&c, 0.5, 2.0);
  cr_expect_eq(RBS_CusumStep(&c, 1.0), 0);
  cr_expect_float_eq(c.s, 0.5, 1e-15);
  cr_expect_eq(RBS_CusumStep(&c, -3.0), 0);
  cr_expect_eq(c.s, 0.0);
  cr_expect_eq(RBS_CusumStep(&c, 2.0), 0);
  cr_expect_eq(RBS_CusumStep(&c, 1.6), 1);
  cr_expect_float_eq(c.s, 2.6, 1e-12);
}
