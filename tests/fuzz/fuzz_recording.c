/* fuzz_recording.c: libFuzzer target for the recording reader: REC_ParseSample, REC_Open and REC_Next. */
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <sanitizer/asan_interface.h>

#include "fuzzcheck.h"
#include "recording.h"

/* REC_Open takes a REC_BUF_ALLOC buffer per file. Under ASan each such allocation
 * maps fresh pages and (re)poisons 128 KiB of shadow, which made a run cost
 * ~7 ms on the virtual machines here: run-fuzz.sh links this target with
 * --wrap=malloc,--wrap=free so that the buffer comes from one static area
 * with a poisoned red zone past its end (reads past the buffer are still
 * caught; a use after REC_Close is not, REC_Close clears the pointer). Each
 * run must give the buffer back: no leak, no double free. */
void *__real_malloc(size_t n);
void __real_free(void *p);
void *__wrap_malloc(size_t n);
void __wrap_free(void *p);
#define RED_ZONE 4096
static unsigned char big[REC_BUF_ALLOC + RED_ZONE] __attribute__((aligned(64)));
static int big_taken;

void *__wrap_malloc(size_t n)
{
  if (n != REC_BUF_ALLOC || big_taken)
    return __real_malloc(n);
  big_taken = 1;
  return big;
}

void __wrap_free(void *p)
{
  if (p != big) {
    __real_free(p);
    return;
  }
  if (!big_taken)
    FZ_Fail("the recording buffer freed twice");
  big_taken = 0;
}

static int file_fd = -1, head_fd = -1;
static char file_path[64], head_path[64];

static void check_sample(const char *what, const SMP_Sample *s)
{
  const double *v = &s->time;
  for (int c = 0; c <= SMP_CHANNELS; c++)
    FZ_CheckValue(what, v[c]);
  if (isnan(s->time))
    FZ_Fail("%s: a sample without its time", what);
}

/* The whole input as one row, in a buffer of exactly its size so that a read
 * past len is caught. */
static void parse_row(const uint8_t *data, size_t size)
{
  char *row = malloc(size ? size : 1);
  if (!row)
    FZ_Fail("out of memory");
  memcpy(row, data, size);
  SMP_Sample s;
  int col = -1;
  if (REC_ParseSample(row, size, &s, &col) == 0) {
    check_sample("REC_ParseSample", &s);
    /* What the writer makes of a row, the reader takes back unchanged, for
     * the values gritlined can write: below 1e55 (an f32 of 3.4e38 times the
     * largest scale, 1e12, times 1000 for kW stays under 3.4e53), whose fields
     * fit the reader's 63 characters a number. */
    int writable = 1;
    for (const double *v = &s.time; v <= &s.grinding; v++)
      writable &= !(fabs(*v) >= 1e55);
    char line[REC_LINE_MAX], again[REC_LINE_MAX];
    long n = writable ? REC_FormatSample(&s, line, sizeof line) : -1;
    if (n > 0) {
      SMP_Sample t;
      if (REC_ParseSample(line, (size_t)n - 1, &t, &col) != 0)
        FZ_Fail("a written row is refused at column %d: %.*s", col, (int)n - 1, line);
      long m = REC_FormatSample(&t, again, sizeof again);
      if (m != n || memcmp(line, again, (size_t)n) != 0)
        FZ_Fail("a written row changes when read back: %.*s", (int)n - 1, line);
    }
  } else if (col < 0 || col > REC_COLUMNS) {
    FZ_Fail("REC_ParseSample: bad column %d", col);
  }
  free(row);
}

/* Equal but for the blanks at the end: the reader trims a value, then cuts it
 * to its field, so a long value may keep blanks where it was cut. */
static int same_text(const char *a, const char *b)
{
  size_t na = strlen(a), nb = strlen(b);
  while (na && strchr(" \t\r", a[na - 1]))
    na--;
  while (nb && strchr(" \t\r", b[nb - 1]))
    nb--;
  return na == nb && memcmp(a, b, na) == 0;
}

/* The metadata read, written again, must read back the same. The writer
 * always has a width (gritlined requires one): a head without it is not
 * written back. */
static void check_head(const REC_Meta *m)
{
  if (!isfinite(m->grinding_width_mm))
    return;
  char head[4096];
  long n = REC_FormatHead(m, head, sizeof head);
  if (n < 0)
    return;
  FZ_Rewrite(head_fd, head, (size_t)n);
  REC_Reader r;
  char err[600];
  if (REC_Open(&r, head_path, err, sizeof err) != 0)
    FZ_Fail("a written head is refused: %s", err);
  if (!same_text(r.meta.machine, m->machine) || !same_text(r.meta.wheel, m->wheel) ||
      !same_text(r.meta.job, m->job) || r.meta.geometry != m->geometry)
    FZ_Fail("a written head reads back different names: \"%s\" \"%s\" \"%s\" %d as \"%s\" \"%s\" \"%s\" %d",
            m->machine, m->wheel, m->job, (int)m->geometry, r.meta.machine, r.meta.wheel, r.meta.job,
            (int)r.meta.geometry);
  REC_Close(&r);
}

static void read_file(const uint8_t *data, size_t size)
{
  FZ_Rewrite(file_fd, data, size);
  REC_Reader r;
  char err[600];
  if (REC_Open(&r, file_path, err, sizeof err) != 0) {
    FZ_CheckMessage("REC_Open", err, sizeof err, file_path);
    return;
  }
  REC_Meta meta = r.meta;
  REC_Item it;
  long last = r.line, items = 0;
  int rc, torn = 0;
  while ((rc = REC_Next(&r, &it, err, sizeof err)) == 1) {
    if (torn)
      FZ_Fail("an item after the torn last line");
    if (it.line <= last)
      FZ_Fail("line numbers do not increase: %ld after %ld", it.line, last);
    last = it.line;
    if ((size_t)++items > size + 1)
      FZ_Fail("more items than bytes");
    switch (it.kind) {
    case REC_ITEM_SAMPLE:
      check_sample("REC_Next", &it.sample);
      break;
    case REC_ITEM_MARK:
      FZ_CheckValue("mark time", it.mark_time);
      if (isnan(it.mark_time) || !it.mark_kind[0] || !memchr(it.mark_kind, '\0', sizeof it.mark_kind) ||
          !memchr(it.mark_text, '\0', sizeof it.mark_text) || strchr(it.mark_text, '\n'))
        FZ_Fail("a malformed mark accepted");
      break;
    case REC_ITEM_TORN:
      torn = 1;
      /* fall through */
    case REC_ITEM_BAD:
      FZ_CheckMessage("REC_Next", err, sizeof err, file_path);
      break;
    default:
      FZ_Fail("unknown item kind %d", (int)it.kind);
    }
  }
  if (rc != 0)
    FZ_CheckMessage("REC_Next", err, sizeof err, file_path);
  REC_Close(&r);
  check_head(&meta); /* after REC_Close: one recording buffer at a time */
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  if (file_fd < 0) {
    file_fd = FZ_OpenMemFile("fuzz-recording", file_path, sizeof file_path);
    head_fd = FZ_OpenMemFile("fuzz-recording-head", head_path, sizeof head_path);
    ASAN_POISON_MEMORY_REGION(big + REC_BUF_ALLOC, RED_ZONE);
  }
  parse_row(data, size);
  read_file(data, size);
  if (big_taken)
    FZ_Fail("the recording buffer was not freed");
  return 0;
}
