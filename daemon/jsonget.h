/* jsonget.h: reads values out of a JSON text by path ("cycle.dull_ratio"), for
 * the operator command's view of the daemon's status. */
#ifndef GRITLINE_JSONGET_H
#define GRITLINE_JSONGET_H

#include <stddef.h>

/* A number at path; NAN when absent, null or not a number. Array elements
 * are addressed by index: "recent_events.0.kind". */
double JSG_Number(const char *json, const char *path);
/* A string (unescaped) or a literal (true, false, null) at path into buf;
 * returns 0, or -1 when absent. */
int JSG_String(const char *json, const char *path, char *buf, size_t size);
/* Number of elements of the array at path, -1 when it is not an array. */
int JSG_Length(const char *json, const char *path);

#endif
