/* robust.c: robust and least-squares estimators and a CUSUM (see robust.h). */
#include "robust.h"

#include <math.h>
#include <string.h>

static void swap(double *a, double *b)
{
  double t = *a;
  *a = *b;
  *b = t;
}

/* x[lo..hi] split around the pivot x[hi] (Lomuto): returns p with
 * x[lo..p) < x[p] = pivot <= x(p..hi]. Every element is moved whatever its
 * value and the index advances by the comparison, so the loop has no branch
 * on the data: a median of the Theil-Sen slopes (about 2000 of them after
 * every pass) spent most of its time in mispredicted branches. */
static unsigned split_below(double *x, unsigned lo, unsigned hi)
{
  double pivot = x[hi];
  unsigned i = lo;
  for (unsigned j = lo; j < hi; j++) {
    double v = x[j];
    x[j] = x[i];
    x[i] = v;
    i += v < pivot;
  }
  x[hi] = x[i];
  x[i] = pivot;
  return i;
}

/* x[from..hi] holds values >= pivot: those equal to it are moved to the front.
 * Returns the end of that run. */
static unsigned gather_equal(double *x, unsigned from, unsigned hi, double pivot)
{
  unsigned i = from;
  for (unsigned j = from; j <= hi; j++) {
    double v = x[j];
    x[j] = x[i];
    x[i] = v;
    i += !(v > pivot);
  }
  return i;
}

/* Quickselect with a median-of-three pivot: expected linear time, no recursion,
 * and the same answer for the same input on every run. Leaves x[0..k) <= x[k]
 * <= x(k..n) (RBS_Median relies on it). */
double RBS_Select(double *x, unsigned n, unsigned k)
{
  if (k >= n)
    return NAN;
  unsigned lo = 0, hi = n - 1;
  while (hi > lo) {
    if (hi - lo < 8) {
      for (unsigned i = lo + 1; i <= hi; i++)
        for (unsigned j = i; j > lo && x[j - 1] > x[j]; j--)
          swap(&x[j - 1], &x[j]);
      break;
    }
    /* The median of first, middle and last goes to x[hi], the pivot's place. */
    unsigned mid = lo + (hi - lo) / 2;
    if (x[mid] < x[lo])
      swap(&x[mid], &x[lo]);
    if (x[hi] < x[lo])
      swap(&x[hi], &x[lo]);
    if (x[mid] < x[hi])
      swap(&x[hi], &x[mid]);
    unsigned p = split_below(x, lo, hi);
    if (k < p) {
      hi = p - 1;
    } else if (k == p) {
      break;
    } else if (p > lo) {
      lo = p + 1;
    } else {
      /* Nothing under the pivot: ties with it (many equal slopes) would be
       * peeled one per round; take them all at once. */
      unsigned e = gather_equal(x, p + 1, hi, x[p]);
      if (k < e)
        break;
      lo = e;
    }
  }
  return x[k];
}

double RBS_Median(double *x, unsigned n)
{
  if (n == 0)
    return NAN;
  unsigned k = n / 2;
  double upper = RBS_Select(x, n, k);
  if (n % 2)
    return upper;
  /* After the selection x[0..k-1] hold the k smallest: the lower middle is their maximum. */
  double lower = x[0];
  for (unsigned i = 1; i < k; i++)
    if (x[i] > lower)
      lower = x[i];
  return 0.5 * (lower + upper);
}

double RBS_MedianCopy(const double *x, unsigned n, double *work)
{
  if (n == 0)
    return NAN;
  memcpy(work, x, n * sizeof(*work));
  return RBS_Median(work, n);
}

double RBS_Mad(const double *x, unsigned n, double *work)
{
  if (n == 0)
    return NAN;
  double med = RBS_MedianCopy(x, n, work);
  for (unsigned i = 0; i < n; i++)
    work[i] = fabs(x[i] - med);
  return RBS_MAD_NORMAL * RBS_Median(work, n);
}

int RBS_LeastSquares(const double *x, const double *y, unsigned n, double *slope, double *intercept)
{
  if (n < 2)
    return -1;
  double mx = 0.0, my = 0.0;
  for (unsigned i = 0; i < n; i++) {
    mx += x[i];
    my += y[i];
  }
  mx /= n;
  my /= n;
  double sxx = 0.0, sxy = 0.0;
  for (unsigned i = 0; i < n; i++) {
    sxx += (x[i] - mx) * (x[i] - mx);
    sxy += (x[i] - mx) * (y[i] - my);
  }
  if (!(sxx > 0.0))
    return -1;
  *slope = sxy / sxx;
  *intercept = my - *slope * mx;
  return 0;
}

unsigned long RBS_TheilSenWork(unsigned n)
{
  unsigned long pairs = (unsigned long)n * (n > 0 ? n - 1 : 0) / 2;
  return pairs > n ? pairs : n;
}

int RBS_TheilSen(const double *x, const double *y, unsigned n, double *work, unsigned long work_len,
                 double *slope, double *intercept)
{
  if (n < 2 || work_len < RBS_TheilSenWork(n))
    return -1;
  unsigned m = 0;
  for (unsigned i = 0; i + 1 < n; i++)
    for (unsigned j = i + 1; j < n; j++)
      if (x[j] != x[i])
        work[m++] = (y[j] - y[i]) / (x[j] - x[i]);
  if (m == 0)
    return -1;
  double b = RBS_Median(work, m);
  for (unsigned i = 0; i < n; i++)
    work[i] = y[i] - b * x[i];
  *slope = b;
  *intercept = RBS_Median(work, n);
  return 0;
}

void RBS_RunMedianInit(RBS_RunMedian *r, unsigned len)
{
  memset(r, 0, sizeof(*r));
  r->len = len < 1 ? 1 : len > RBS_RUNMED_MAX ? RBS_RUNMED_MAX : len;
}

double RBS_RunMedianPush(RBS_RunMedian *r, double x)
{
  double work[RBS_RUNMED_MAX];
  r->ring[r->head] = x;
  r->head = (r->head + 1) % r->len;
  if (r->n < r->len)
    r->n++;
  return RBS_MedianCopy(r->ring, r->n, work);
}

void RBS_EwmaInit(RBS_Ewma *e, double alpha)
{
  e->alpha = alpha;
  e->value = NAN;
}

double RBS_EwmaPush(RBS_Ewma *e, double x)
{
  e->value = isnan(e->value) ? x : e->value + e->alpha * (x - e->value);
  return e->value;
}

void RBS_CusumInit(RBS_Cusum *c, double k, double h)
{
  c->k = k;
  c->h = h;
  c->s = 0.0;
  c->alarm = 0;
}

int RBS_CusumStep(RBS_Cusum *c, double z)
{
  double s = c->s + z - c->k;
  c->s = s > 0.0 ? s : 0.0;
  c->alarm = c->s > c->h;
  return c->alarm;
}
