/* soakgen.c: writes a long synthetic recording (gritline-samples/1) to standard output for the replay soak test. */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

/* The stream: one sample a millisecond of a surface grinder of our demo shop
 * (Alder Street Works, sg4, wheel cx60-vitrified): strokes of 3 s, 0.5 s of
 * reversal at rest, 2 s of contact at 800 W over 1500 W of idle power, 0.5 s of
 * overrun; the infeed advances 0.015 mm at each reversal. Integers only, so the
 * same arguments always give the same bytes. */
#define STROKE_MS 3000u
#define CONTACT_FROM_MS 500u
#define CONTACT_TO_MS 2500u

typedef struct out_buf {
  char data[1 << 20]; /* bytes waiting for write(2) */
  size_t used;        /* bytes in data */
} out_buf;

static int flush_out(out_buf *o)
{
  size_t done = 0;
  while (done < o->used) {
    ssize_t n = write(STDOUT_FILENO, o->data + done, o->used - done);
    if (n <= 0)
      return -1;
    done += (size_t)n;
  }
  o->used = 0;
  return 0;
}

/* v with `decimals` digits after the point, v given in units of 10^-decimals. */
static void put_fixed(out_buf *o, uint64_t v, int decimals)
{
  char tmp[32];
  int n = 0;
  do {
    tmp[n++] = (char)('0' + v % 10);
    v /= 10;
    if (n == decimals)
      tmp[n++] = '.';
  } while (v || n <= decimals);
  if (tmp[n - 1] == '.')
    tmp[n++] = '0';
  while (n)
    o->data[o->used++] = tmp[--n];
}

static void put_text(out_buf *o, const char *s)
{
  size_t n = strlen(s);
  memcpy(o->data + o->used, s, n);
  o->used += n;
}

int main(int argc, char **argv)
{
  if (argc != 3) {
    fprintf(stderr, "usage: soakgen SAMPLES START_UNIX_SECONDS\n");
    return 64;
  }
  uint64_t samples = strtoull(argv[1], NULL, 10);
  uint64_t start_s = strtoull(argv[2], NULL, 10);
  static out_buf o;
  time_t st = (time_t)start_s;
  struct tm tm;
  gmtime_r(&st, &tm);
  char head[1024];
  snprintf(head, sizeof head,
           "# format: gritline-samples/1\n# machine: sg4\n# geometry: surface\n# grinding_width_mm: 30\n"
           "# wheel_diameter_mm: 400\n# started: %04d-%02d-%02dT%02d:%02d:%02d.000Z\n# wheel: cx60-vitrified\n"
           "# job: plate-200\n"
           "time,spindle_power_w,spindle_speed_rpm,work_speed_mm_min,infeed_position_mm,depth_of_cut_mm,"
           "wheel_diameter_mm,dress_count,grinding\n"
           "# mark: %llu.000000 start soakgen %llu samples state=fresh\n",
           tm.tm_year + 1900, tm.tm_mon + 1, tm.tm_mday, tm.tm_hour, tm.tm_min, tm.tm_sec,
           (unsigned long long)start_s, (unsigned long long)samples);
  put_text(&o, head);
  uint32_t noise = 12345u;
  uint64_t infeed_um_10 = 0; /* infeed in 0.1 um */
  for (uint64_t i = 0; i < samples; i++) {
    uint64_t ms = i % STROKE_MS;
    if (ms == 0)
      infeed_um_10 = (infeed_um_10 + 150u) % 100000000u; /* 0.015 mm a pass, back to 0 after 10 m */
    int contact = ms >= CONTACT_FROM_MS && ms < CONTACT_TO_MS;
    noise = noise * 1664525u + 1013904223u; /* LCG (Numerical Recipes constants, from memory) */
    uint64_t power_dw = 15000u + (contact ? 8000u : 0u) + (noise >> 24) % 100u; /* 0.1 W */
    put_fixed(&o, start_s * 1000000u + i * 1000u, 6);
    o.data[o.used++] = ',';
    put_fixed(&o, power_dw, 1);
    put_text(&o, ",1450.0,");
    put_text(&o, ms < CONTACT_FROM_MS ? "0.00," : "6000.00,");
    put_fixed(&o, infeed_um_10 * 100u, 6); /* 0.1 um = 100 * 1e-6 mm */
    put_text(&o, ",,399.9989,0,");
    put_text(&o, contact ? "1\n" : "0\n");
    if (o.used > sizeof o.data - 256 && flush_out(&o) != 0)
      return 74;
  }
  return flush_out(&o) != 0 ? 74 : 0;
}
