/* units.c: unit conversions of the grinding trade. */
#include "units.h"

#include <math.h>

double UNT_MmPerMinToMmPerS(double v) { return v / 60.0; }
double UNT_MmPerSToMmPerMin(double v) { return v * 60.0; }
double UNT_MPerSToFtPerMin(double v) { return v * 60.0 / UNT_M_PER_FOOT; }
double UNT_FtPerMinToMPerS(double v) { return v * UNT_M_PER_FOOT / 60.0; }
double UNT_InchToMm(double in) { return in * UNT_MM_PER_INCH; }
double UNT_MmToInch(double mm) { return mm / UNT_MM_PER_INCH; }
double UNT_InPerMinToMmPerS(double v) { return v * UNT_MM_PER_INCH / 60.0; }
double UNT_MmPerSToInPerMin(double v) { return v * 60.0 / UNT_MM_PER_INCH; }
double UNT_MPerMinToMmPerS(double v) { return v * 1000.0 / 60.0; }

/* 1 hp*min = 60 * 745.7 J; 1 in^3 = 16387.064 mm^3. */
double UNT_HpMinPerIn3ToJPerMm3(double u) { return u * UNT_W_PER_HP * 60.0 / UNT_MM3_PER_IN3; }
double UNT_JPerMm3ToHpMinPerIn3(double u) { return u * UNT_MM3_PER_IN3 / (UNT_W_PER_HP * 60.0); }
double UNT_HpToW(double hp) { return hp * UNT_W_PER_HP; }
double UNT_WToHp(double w) { return w / UNT_W_PER_HP; }

double UNT_SurfaceSpeed(double d_mm, double n_rpm) { return M_PI * d_mm * n_rpm / 60000.0; }
double UNT_SpindleSpeedFor(double d_mm, double vs_m_s) { return vs_m_s * 60000.0 / (M_PI * d_mm); }
