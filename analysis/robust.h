/* robust.h: robust and least-squares estimators and a CUSUM, over caller-owned memory (pure). */
#ifndef GRITLINE_ROBUST_H
#define GRITLINE_ROBUST_H

/* Nothing here allocates: functions that need scratch space take it from the
 * caller, and the streaming filters are plain structs with fixed arrays.
 * Selection uses a deterministic pivot, so results never depend on a seed. */

/* Normal consistency factor of the median absolute deviation: 1 / Phi^-1(3/4)
 * (standard value, from memory): 1.4826 * MAD estimates the standard deviation
 * of normally distributed data. */
#define RBS_MAD_NORMAL 1.482602218505602

/* The k-th smallest (0-based) of x[0..n-1]; reorders x. NAN when k >= n. */
double RBS_Select(double *x, unsigned n, unsigned k);
/* Median of x[0..n-1] (mean of the two middle values when n is even); reorders
 * x. NAN when n == 0. */
double RBS_Median(double *x, unsigned n);
/* Median without touching x: copies into work[0..n-1] first. */
double RBS_MedianCopy(const double *x, unsigned n, double *work);
/* Scaled median absolute deviation about the median, RBS_MAD_NORMAL * MAD;
 * work holds n values. NAN when n == 0. */
double RBS_Mad(const double *x, unsigned n, double *work);

/* Ordinary least-squares line y = intercept + slope * x. Returns 0, or -1 when
 * n < 2 or the x values are all equal (then nothing is written). Sums are
 * centred on the means, so large offsets in x do not cost precision. */
int RBS_LeastSquares(const double *x, const double *y, unsigned n, double *slope, double *intercept);

/* Theil-Sen line: slope = median of the slopes of all pairs with distinct x,
 * intercept = median of y - slope * x. work must hold n*(n-1)/2 values (and at
 * least n). Returns 0, or -1 when fewer than 2 distinct x or work is too short. */
int RBS_TheilSen(const double *x, const double *y, unsigned n, double *work, unsigned long work_len,
                 double *slope, double *intercept);
/* Scratch values RBS_TheilSen needs for n points. */
unsigned long RBS_TheilSenWork(unsigned n);

/* Running median over the last len values (len <= RBS_RUNMED_MAX). */
#define RBS_RUNMED_MAX 15
typedef struct RBS_RunMedian {
  double ring[RBS_RUNMED_MAX]; /* latest values, same unit as the input */
  unsigned len;                /* window length */
  unsigned n;                  /* values held, <= len */
  unsigned head;               /* next slot to write */
} RBS_RunMedian;
/* len is clamped to 1..RBS_RUNMED_MAX. */
void RBS_RunMedianInit(RBS_RunMedian *r, unsigned len);
/* Adds x and returns the median of the values held (fewer than len at first). */
double RBS_RunMedianPush(RBS_RunMedian *r, double x);

/* Exponentially weighted moving average, primed by its first input. */
typedef struct RBS_Ewma {
  double alpha;  /* weight of the newest value, 0 < alpha <= 1 */
  double value;  /* current average, NAN before the first input */
} RBS_Ewma;
void RBS_EwmaInit(RBS_Ewma *e, double alpha);
double RBS_EwmaPush(RBS_Ewma *e, double x);

/* One-sided upper CUSUM on standardised values z (Page): S = max(0, S + z - k),
 * alarm while S > h. k (allowance) and h (decision interval) are in units of
 * the standard deviation of z. */
typedef struct RBS_Cusum {
  double k;      /* allowance, standard deviations */
  double h;      /* decision interval, standard deviations */
  double s;      /* current sum, standard deviations */
  int alarm;     /* S > h after the latest step */
} RBS_Cusum;
void RBS_CusumInit(RBS_Cusum *c, double k, double h);
/* Adds one standardised value; returns the alarm state after it. */
int RBS_CusumStep(RBS_Cusum *c, double z);

#endif
