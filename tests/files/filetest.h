/* filetest.h: helpers shared by the file-driver tests: a private temporary folder, whole-file I/O. */
#ifndef GRITLINE_FILETEST_H
#define GRITLINE_FILETEST_H

#include <stddef.h>

#include "recording.h"

/* Makes a fresh folder under $TMPDIR (or /tmp) and returns its path; aborts the test on failure. */
const char *FTS_TempDir(void);
/* Removes the folder made by FTS_TempDir with everything in it. */
void FTS_RemoveTempDir(void);
/* Path of name inside the temporary folder (a static buffer per call slot, 4 slots). */
const char *FTS_Path(const char *name);
/* Writes len bytes to path, replacing it. Returns 0 or -1. */
int FTS_WriteFile(const char *path, const void *data, size_t len);
/* Reads a whole file into a malloc'd NUL-terminated buffer; *len gets its size. NULL on failure. */
char *FTS_ReadFile(const char *path, size_t *len);
/* The value of recording column col (0 = time, REC_COLUMNS columns) in a sample. */
double *FTS_Column(SMP_Sample *s, int col);

#endif
