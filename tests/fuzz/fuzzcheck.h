/* fuzzcheck.h: what the fuzz targets check alike: one-line messages, numbers finite or NAN, inputs as files. */
#ifndef GRITLINE_FUZZCHECK_H
#define GRITLINE_FUZZCHECK_H

#include <stddef.h>

/* Stops the run (abort, so libFuzzer keeps the input) with a one-line reason. */
__attribute__((noreturn, format(printf, 1, 2))) void FZ_Fail(const char *fmt, ...);
/* A failure message: NUL-terminated within size, not empty, one line, and
 * starting with prefix ("" = any). Fails the run otherwise. */
void FZ_CheckMessage(const char *what, const char *msg, size_t size, const char *prefix);
/* A value handed on as a number: finite, or NAN for "none". Never an infinity. */
void FZ_CheckValue(const char *what, double v);
/* An anonymous in-memory file (memfd) opened once; *path receives the
 * /proc/self/fd/N name that the parsers open. Fails the run when it cannot. */
int FZ_OpenMemFile(const char *name, char *path, size_t size);
/* Replaces the content of fd with data. */
void FZ_Rewrite(int fd, const void *data, size_t len);

#endif
