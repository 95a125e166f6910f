/* writelog.c: the append-only log of Modbus write requests. */
#include "writelog.h"

#include <errno.h>
#include <string.h>

const char *SIM_WriteLogHeader(void)
{
  return "real_time,sim_time,client,unit,function,address,count,values,result";
}

int SIM_WriteLogOpen(SIM_WriteLog *log, const char *path, char *err, size_t errsize)
{
  log->f = NULL;
  if (path == NULL)
    return 0;
  log->f = fopen(path, "a");
  if (log->f == NULL) {
    snprintf(err, errsize, "%s: %s", path, strerror(errno));
    return -1;
  }
  if (ftell(log->f) == 0) {
    fprintf(log->f, "%s\n", SIM_WriteLogHeader());
    fflush(log->f);
  }
  return 0;
}

int SIM_WriteLogAdd(SIM_WriteLog *log, const SIM_WriteEntry *e)
{
  if (log->f == NULL)
    return 0;
  fprintf(log->f, "%lld.%03lld,%lld.%03lld,%s,%d,%d,%d,%d,", (long long)(e->real_ms / 1000),
          (long long)(e->real_ms % 1000), (long long)(e->sim_ms / 1000),
          (long long)(e->sim_ms % 1000), e->client, e->unit, e->function, e->address, e->count);
  for (int i = 0; i < e->n_values; i++)
    fprintf(log->f, "%s%u", i == 0 ? "" : " ", (unsigned)e->values[i]);
  if (e->exception == 0)
    fprintf(log->f, ",accepted\n");
  else if (e->exception == SIM_WRITE_NO_REPLY)
    fprintf(log->f, ",no reply\n");
  else if (e->exception == SIM_WRITE_GARBAGE)
    fprintf(log->f, ",garbage\n");
  else
    fprintf(log->f, ",exception %02X\n", (unsigned)e->exception);
  return fflush(log->f) == 0 ? 0 : -1;
}

void SIM_WriteLogClose(SIM_WriteLog *log)
{
  if (log->f != NULL)
    fclose(log->f);
  log->f = NULL;
}
