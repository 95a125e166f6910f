/* logfile.h: append-only text files written in whole lines. */
#ifndef GRITLINE_LOGFILE_H
#define GRITLINE_LOGFILE_H

#include <stddef.h>

typedef struct LGF_File {
  int fd;            /* -1 when closed */
  long long size;    /* bytes known to be complete lines */
  int created;       /* the file was empty or new when opened */
  long long trimmed; /* bytes of an incomplete last line removed when opened */
  char path[512];    /* for messages */
} LGF_File;

void LGF_Init(LGF_File *f);
/* Opens (creating) path for appending. An incomplete last line left by a
 * crash is cut off (f->trimmed tells how many bytes), so that every line
 * after it is whole. Returns 0, or -1 with errno set. */
int LGF_Open(LGF_File *f, const char *path);
/* Appends len bytes that end with '\n'. All or nothing: after a short write
 * (disk full) the file is cut back to its previous size. Returns 0, or -1 with
 * errno set. */
int LGF_Append(LGF_File *f, const char *line, size_t len);
/* Bytes free for an unprivileged writer on the file's file system, or -1
 * when unknown (closed, or fstatvfs failed). */
long long LGF_Room(const LGF_File *f);
/* Flushes to the disk (fdatasync) and closes. */
void LGF_Close(LGF_File *f);
int LGF_IsOpen(const LGF_File *f);
/* Reads the last complete line of the open file into buf (without '\n');
 * returns its length or -1 when the file holds no line. */
long LGF_LastLine(const LGF_File *f, char *buf, size_t size);

#endif
