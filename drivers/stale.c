/* stale.c: detection of frozen channels, values whose raw bits stop changing (pure, clock-free). */
#include "stale.h"

#include <string.h>

void STL_Init(STL_Tracker *t, unsigned n, const double *limit_s)
{
  memset(t, 0, sizeof *t);
  t->n = n > STL_MAX_CHANNELS ? STL_MAX_CHANNELS : n;
  for (unsigned i = 0; i < t->n; i++) {
    t->limit_s[i] = limit_s ? limit_s[i] : 0.0;
    if (t->limit_s[i] > 0.0)
      t->watched |= 1u << i;
  }
}

/* Both run on every sample of a replay: they visit only the channels with
 * a limit (set bits), not all of them; the others can never be stale. */
void STL_Update(STL_Tracker *t, unsigned read_mask, const uint64_t *raw, double now_s)
{
  unsigned now_read = read_mask & t->watched;
  for (unsigned left = now_read; left; left &= left - 1u) {
    unsigned i = (unsigned)__builtin_ctz(left);
    if (!(t->current & (1u << i)) || raw[i] != t->last_raw[i]) {
      t->last_raw[i] = raw[i];
      t->changed_s[i] = now_s;
    }
  }
  t->current = now_read;
}

unsigned STL_Stale(const STL_Tracker *t, double now_s)
{
  unsigned stale = 0;
  for (unsigned left = t->current & t->watched; left; left &= left - 1u) {
    unsigned i = (unsigned)__builtin_ctz(left);
    if (now_s - t->changed_s[i] > t->limit_s[i])
      stale |= 1u << i;
  }
  return stale;
}
