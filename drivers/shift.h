/* shift.h: the shift schedule: which shift a moment belongs to, and its folder label. */
#ifndef GRITLINE_SHIFT_H
#define GRITLINE_SHIFT_H

#define SFT_MAX 32 /* shifts a day; short ones serve soak tests */
#define SFT_NAME 24

typedef struct SFT_Schedule {
  int count;                  /* number of shifts a day, 1..SFT_MAX */
  int start_min[SFT_MAX];     /* start of each shift, minutes after local midnight, ascending */
  char name[SFT_MAX][SFT_NAME]; /* label of each shift: [A-Za-z0-9-] */
} SFT_Schedule;

/* One shift on one day. */
typedef struct SFT_Shift {
  double start;             /* UNIX s, first moment of the shift */
  double end;               /* UNIX s, first moment of the next shift */
  int index;                /* which shift of the schedule */
  char label[40];           /* "<YYYY-MM-DD>_<name>", the date being the shift's start date */
} SFT_Shift;

/* Parses "06:00,14:00,22:00" and "early,late,night" (names may be NULL: "1", "2"...).
 * Returns 0, or -1 with a message in err. */
int SFT_Parse(SFT_Schedule *s, const char *starts, const char *names, char *err, unsigned long errlen);
/* The shift that contains UNIX time t, in the process's local time zone (TZ).
 * A shift that crosses midnight is labelled by its start date. */
void SFT_Find(const SFT_Schedule *s, double t, SFT_Shift *out);
/* Writes the schedule back as "06:00,14:00,22:00" and "early,late,night". */
void SFT_Format(const SFT_Schedule *s, char *starts, unsigned long slen, char *names, unsigned long nlen);

#endif
