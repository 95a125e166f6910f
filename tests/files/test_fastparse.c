/* test_fastparse.c: Criterion tests that the recording reader's fast paths read every row as glibc's strtod does. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "filetest.h"
#include "recording.h"

/* The replay's speed comes from fast paths in drivers/recording.c: a
 * one-pass reading of the usual fields, the previous row's trailing fields
 * and whole seconds taken again when their bytes repeat. Their results must
 * be those of the plain reading the format describes (docs/recording-format.md):
 * each field a number as strtod reads it whole, finite; empty = not read. The
 * reference below is written here from that description, on glibc's strtod
 * (correctly rounded), with the reader's two documented limits: a field of
 * 64 bytes or more is refused unless it is the short form (sign, digits,
 * point, digits) with at most 19 significant and 19 fraction digits and a
 * value under 2^53 (those are read exactly), and a row has 9 fields. */

static uint64_t rng = 0x2545f4914f6cdd1dull;
static uint64_t next(void)
{
  rng ^= rng << 13;
  rng ^= rng >> 7;
  rng ^= rng << 17;
  return rng;
}


/* The short form: [+-]digits[.digits] with a digit somewhere, at most 19
 * significant and 19 fraction digits, under 2^53 as an integer. */
static int short_form(const char *f, size_t n)
{
  size_t i = 0, sig = 0, frac = 0, any = 0, dot = 0;
  uint64_t m = 0;
  if (i < n && (f[i] == '-' || f[i] == '+'))
    i++;
  for (; i < n; i++) {
    if (f[i] >= '0' && f[i] <= '9') {
      any = 1;
      if (sig >= 19)
        return 0;
      m = m * 10 + (uint64_t)(f[i] - '0');
      if (m)
        sig++;
      if (dot && ++frac > 19)
        return 0;
    } else if (f[i] == '.' && !dot) {
      dot = 1;
    } else {
      return 0;
    }
  }
  return any && m < (1ull << 53);
}

/* One field by the reference: 0 with *v, or -1. */
static int ref_field(const char *f, size_t n, double *v)
{
  char tmp[1024];
  if (n == 0 || n >= sizeof tmp)
    return -1;
  if (!short_form(f, n) && n >= 64)
    return -1;
  memcpy(tmp, f, n);
  tmp[n] = '\0';
  char *end;
  double x = strtod(tmp, &end);
  if (end != tmp + n || !isfinite(x))
    return -1;
  *v = x;
  return 0;
}

/* A row by the reference: 0 with s filled, or -1 with *col (1-based, 0 = count). */
static int ref_row(const char *line, size_t len, SMP_Sample *s, int *col)
{
  SMP_Clear(s, NAN);
  size_t pos = 0;
  for (int c = 0; c < REC_COLUMNS; c++) {
    const char *f = line + pos;
    const char *comma = memchr(f, ',', len - pos);
    size_t n = comma ? (size_t)(comma - f) : len - pos;
    if ((c < REC_COLUMNS - 1) != (comma != NULL)) {
      *col = 0;
      return -1;
    }
    if ((n > 0 || c == 0) && ref_field(f, n, FTS_Column(s, c)) != 0) {
      *col = c + 1;
      return -1;
    }
    pos += n + 1;
  }
  return 0;
}

static int same_sample(const SMP_Sample *a, const SMP_Sample *b)
{
  return memcmp(a, b, sizeof *a) == 0; /* bit for bit: -0.0 and the NAN of an empty field too */
}

static const char alphabet[] = "0123456789012345678901234567890123456789..,,-+eE x";

/* A row near what gritlined writes, or noise. */
static size_t make_row(char *row, size_t cap)
{
  size_t len = 0;
  int mode = (int)(next() % 4);
  if (mode == 0) {
    size_t n = next() % 90;
    for (size_t k = 0; k < n && len < cap; k++)
      row[len++] = alphabet[next() % (sizeof alphabet - 1)];
    return len;
  }
  int cols = 9 + (mode == 3 ? (int)(next() % 3) - 1 : 0);
  for (int c = 0; c < cols && len + 40 < cap; c++) {
    if (c)
      row[len++] = ',';
    if (c && next() % 5 == 0)
      continue;
    if (next() % 4 == 0)
      row[len++] = '-';
    int whole = (int)(next() % 12), frac = (int)(next() % 10) - 2;
    if (next() % 40 == 0)
      whole = 15 + (int)(next() % 10);
    for (int k = 0; k < whole; k++)
      row[len++] = (char)('0' + next() % 10);
    if (frac >= 0) {
      row[len++] = '.';
      for (int k = 0; k < frac; k++)
        row[len++] = (char)('0' + next() % 10);
    }
    if (next() % 50 == 0)
      row[len++] = alphabet[next() % (sizeof alphabet - 1)];
  }
  return len;
}

Test(fastparse, rows_as_strtod_reads_them)
{
  char row[256];
  long parsed = 0;
  for (long i = 0; i < 400000; i++) {
    size_t len = make_row(row, sizeof row);
    char *exact = malloc(len ? len : 1); /* no byte after the row: the reader may not look past it */
    cr_assert(exact);
    memcpy(exact, row, len);
    SMP_Sample a, b;
    int ca = -7, cb = -7;
    int ra = ref_row(row, len, &a, &ca);
    int rb = REC_ParseSample(exact, len, &b, &cb);
    free(exact);
    cr_assert_eq(ra, rb, "row \"%.*s\": reference %d, reader %d", (int)len, row, ra, rb);
    if (ra == 0)
      cr_assert(same_sample(&a, &b), "row \"%.*s\" read differently", (int)len, row);
    else
      cr_assert_eq(ca, cb, "row \"%.*s\": column %d, reader %d", (int)len, row, ca, cb);
    parsed += ra == 0;
  }
  cr_assert_gt(parsed, 100000); /* most rows are well formed: the fast path was taken */
}

/* Files whose rows change a little from one to the next, as recordings do,
 * and sometimes in their structure (a byte changed, added or removed, a comma
 * more or less): what REC_Next reads with the previous row's help must equal
 * the reference's reading of each line alone. */
Test(fastparse, files_row_by_row)
{
  char dir[] = "/tmp/gritline-fastparse-XXXXXX";
  cr_assert(mkdtemp(dir));
  char path[300];
  snprintf(path, sizeof path, "%s/samples.csv", dir);
  for (int f = 0; f < 12; f++) {
    FILE *o = fopen(path, "w");
    cr_assert(o);
    fprintf(o, "# format: %s\n%s\n", REC_FORMAT, REC_HEADER);
    char row[300] = "1709618400.000000,2055.0,1450.5,0.00,0.000000,,400.0000,0,";
    size_t len = strlen(row);
    int rows = 30000 + (int)(next() % 20000);
    for (int i = 0; i < rows; i++) {
      int k = (int)(next() % 100);
      if (k < 45) { /* the next poll: a new time, mostly the same whole seconds */
        char t[40];
        int n = snprintf(t, sizeof t, "%.6f", 1709618400.0 + i * 0.01 + (double)(next() % 150) * 1e-6);
        char *comma = memchr(row, ',', len);
        size_t old = comma ? (size_t)(comma - row) : len;
        if (len - old + (size_t)n < 250) {
          memmove(row + n, row + old, len - old);
          memcpy(row, t, (size_t)n);
          len = len - old + (size_t)n;
        }
      } else if (k < 70 && len) {
        row[next() % len] = alphabet[next() % (sizeof alphabet - 1)];
      } else if (k < 80 && len < 240) {
        size_t at = next() % (len + 1);
        memmove(row + at + 1, row + at, len - at);
        row[at] = alphabet[next() % (sizeof alphabet - 1)];
        len++;
      } else if (k < 90 && len > 1) {
        size_t at = next() % len;
        memmove(row + at, row + at + 1, len - at - 1);
        len--;
      } else if (k < 94) {
        strcpy(row, "1709618400.000000,2055.0,1450.5,0.00,0.000000,,400.0000,0,");
        len = strlen(row);
      }
      if (len && row[0] == '#')
        row[0] = '1';
      fwrite(row, 1, len, o);
      fputc('\n', o);
      if (next() % 500 == 0)
        fprintf(o, "# mark: %d.5 dress operator\n", i);
    }
    cr_assert_eq(fclose(o), 0);

    /* The reference reads the lines itself. */
    size_t size = 0;
    FILE *in = fopen(path, "r");
    cr_assert(in);
    fseek(in, 0, SEEK_END);
    size = (size_t)ftell(in);
    rewind(in);
    char *data = malloc(size + 1);
    cr_assert(data);
    cr_assert_eq(fread(data, 1, size, in), size);
    fclose(in);
    REC_Reader r;
    char err[800];
    cr_assert_eq(REC_Open(&r, path, err, sizeof err), 0, "%s", err);
    const char *p = data;
    long line = 0, samples = 0;
    while (p < data + size) {
      const char *nl = memchr(p, '\n', (size_t)(data + size - p));
      size_t n = (size_t)(nl - p);
      line++;
      int skip = line <= 2 || (n > 0 && p[0] == '#' && strncmp(p, "# mark: ", 8) != 0) ||
                 (n == strlen(REC_HEADER) && memcmp(p, REC_HEADER, n) == 0);
      if (!skip) {
        REC_Item it;
        cr_assert_eq(REC_Next(&r, &it, err, sizeof err), 1, "line %ld", line);
        cr_assert_eq(it.line, line);
        if (p[0] == '#') {
          cr_assert_eq(it.kind, REC_ITEM_MARK, "line %ld", line);
        } else {
          SMP_Sample ref;
          int col = -1;
          if (ref_row(p, n, &ref, &col) == 0) {
            cr_assert_eq(it.kind, REC_ITEM_SAMPLE, "file %d line %ld: \"%.*s\"", f, line, (int)n, p);
            cr_assert(same_sample(&ref, &it.sample), "file %d line %ld read differently", f, line);
            samples++;
          } else {
            cr_assert_eq(it.kind, REC_ITEM_BAD, "file %d line %ld: \"%.*s\"", f, line, (int)n, p);
          }
        }
      }
      p = nl + 1;
    }
    REC_Item it;
    cr_assert_eq(REC_Next(&r, &it, err, sizeof err), 0);
    REC_Close(&r);
    free(data);
    cr_assert_gt(samples, rows / 10);
  }
  unlink(path);
  rmdir(dir);
}
