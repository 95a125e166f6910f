/* units.h: unit conversions of the grinding trade (pure, exact definitions). */
#ifndef GRITLINE_UNITS_H
#define GRITLINE_UNITS_H

/* Exact definitions (NIST SP 811, Appendix B): 1 in = 25.4 mm, 1 ft = 0.3048 m,
 * 1 hp (550 ft*lbf/s) = 745.699 871 582 270 22 W. */
#define UNT_MM_PER_INCH 25.4
#define UNT_M_PER_FOOT 0.3048
#define UNT_W_PER_HP 745.69987158227022
#define UNT_MM3_PER_IN3 (25.4 * 25.4 * 25.4)

/* mm/min -> mm/s and back. */
double UNT_MmPerMinToMmPerS(double v_mm_min);
double UNT_MmPerSToMmPerMin(double v_mm_s);
/* m/s -> ft/min and back. */
double UNT_MPerSToFtPerMin(double v_m_s);
double UNT_FtPerMinToMPerS(double v_ft_min);
/* inch -> mm and back. */
double UNT_InchToMm(double in);
double UNT_MmToInch(double mm);
/* in/min -> mm/s and back. */
double UNT_InPerMinToMmPerS(double v_in_min);
double UNT_MmPerSToInPerMin(double v_mm_s);
/* m/min -> mm/s. */
double UNT_MPerMinToMmPerS(double v_m_min);
/* hp*min/in^3 -> J/mm^3 and back (specific energy). */
double UNT_HpMinPerIn3ToJPerMm3(double u_hp);
double UNT_JPerMm3ToHpMinPerIn3(double u_j);
/* hp -> W and back. */
double UNT_HpToW(double hp);
double UNT_WToHp(double w);

/* Wheel surface speed vs [m/s] of a wheel of diameter d_mm [mm] at n_rpm [1/min]:
 * vs = pi * ds * n / 60000. */
double UNT_SurfaceSpeed(double d_mm, double n_rpm);
/* Inverse: the spindle speed [1/min] that gives surface speed vs_m_s [m/s] on a
 * wheel of diameter d_mm [mm]; with the wheel's marked maximum operating speed
 * this is the highest rpm allowed for the current diameter. */
double UNT_SpindleSpeedFor(double d_mm, double vs_m_s);

#endif
