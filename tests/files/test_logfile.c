/* test_logfile.c: Criterion tests of append-only whole-line files (drivers/logfile.c). */
#include <criterion/criterion.h>
#include <errno.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/statvfs.h>
#include <sys/wait.h>
#include <unistd.h>

#include "filetest.h"
#include "logfile.h"

static void setup(void) { FTS_TempDir(); }
static void teardown(void) { FTS_RemoveTempDir(); }
TestSuite(logfile, .init = setup, .fini = teardown);

static void expect_content(const char *path, const char *want)
{
  size_t len;
  char *got = FTS_ReadFile(path, &len);
  cr_assert_not_null(got, "%s cannot be read", path);
  cr_expect_eq(len, strlen(want), "%s holds %zu bytes, expected %zu", path, len, strlen(want));
  cr_expect_str_eq(got, want);
  free(got);
}

static void append(LGF_File *f, const char *line)
{
  cr_assert_eq(LGF_Append(f, line, strlen(line)), 0, "append \"%s\": %s", line, strerror(errno));
}

Test(logfile, open_creates_and_appends)
{
  const char *path = FTS_Path("passes.csv");
  LGF_File f;
  cr_assert_eq(LGF_Open(&f, path), 0, "%s", strerror(errno));
  cr_expect(LGF_IsOpen(&f));
  cr_expect_eq(f.created, 1);
  cr_expect_eq(f.size, 0);
  cr_expect_eq(f.trimmed, 0);
  cr_expect_str_eq(f.path, path);
  struct stat st;
  cr_assert_eq(stat(path, &st), 0);
  cr_expect(S_ISREG(st.st_mode));
  append(&f, "pass,start_time\n");
  append(&f, "1,1709618400.000\n");
  cr_expect_eq(f.size, 33);
  LGF_Close(&f);
  cr_expect(!LGF_IsOpen(&f));
  expect_content(path, "pass,start_time\n1,1709618400.000\n");

  /* Reopened: not created, appends after what is there. */
  cr_assert_eq(LGF_Open(&f, path), 0);
  cr_expect_eq(f.created, 0);
  cr_expect_eq(f.size, 33);
  cr_expect_eq(f.trimmed, 0);
  append(&f, "2,1709618460.000\n");
  LGF_Close(&f);
  expect_content(path, "pass,start_time\n1,1709618400.000\n2,1709618460.000\n");
  LGF_Close(&f); /* twice is harmless */
}

Test(logfile, closed_or_missing)
{
  LGF_File f;
  LGF_Init(&f);
  cr_expect(!LGF_IsOpen(&f));
  errno = 0;
  cr_expect_eq(LGF_Append(&f, "x\n", 2), -1);
  cr_expect_eq(errno, EBADF);
  char buf[16];
  cr_expect_eq(LGF_LastLine(&f, buf, sizeof buf), -1);
  cr_expect_eq(LGF_Room(&f), -1);
  cr_expect_eq(LGF_Open(&f, FTS_Path("no/such/folder/events.csv")), -1);
  cr_expect_eq(errno, ENOENT);
  cr_expect(!LGF_IsOpen(&f));
}

Test(logfile, an_incomplete_last_line_is_cut_off_at_open)
{
  const char *path = FTS_Path("events.csv");
  static const char torn[] = "time,kind\n1.000,shift\n2.000,dre";
  cr_assert_eq(FTS_WriteFile(path, torn, strlen(torn)), 0);
  LGF_File f;
  cr_assert_eq(LGF_Open(&f, path), 0);
  cr_expect_eq(f.trimmed, 9); /* "2.000,dre" */
  cr_expect_eq(f.size, 22);
  cr_expect_eq(f.created, 0);
  expect_content(path, "time,kind\n1.000,shift\n");
  append(&f, "3.000,dress\n");
  LGF_Close(&f);
  expect_content(path, "time,kind\n1.000,shift\n3.000,dress\n");

  /* Nothing but a torn line: the file is empty again and counts as new. */
  cr_assert_eq(FTS_WriteFile(path, "time,ki", 7), 0);
  cr_assert_eq(LGF_Open(&f, path), 0);
  cr_expect_eq(f.trimmed, 7);
  cr_expect_eq(f.size, 0);
  cr_expect_eq(f.created, 1);
  LGF_Close(&f);
  expect_content(path, "");
}

Test(logfile, a_long_torn_tail_spanning_several_reads)
{
  /* The tail is searched backwards in 4 kB steps: make it cross a few. */
  const char *path = FTS_Path("samples.csv");
  size_t head = 3 * 4096 + 17, tail = 2 * 4096 + 5;
  char *text = malloc(head + tail);
  cr_assert_not_null(text);
  memset(text, 'a', head - 1);
  text[head - 1] = '\n';
  memset(text + head, 'b', tail);
  cr_assert_eq(FTS_WriteFile(path, text, head + tail), 0);
  LGF_File f;
  cr_assert_eq(LGF_Open(&f, path), 0);
  cr_expect_eq(f.trimmed, (long long)tail);
  cr_expect_eq(f.size, (long long)head);
  LGF_Close(&f);
  size_t len;
  char *got = FTS_ReadFile(path, &len);
  cr_assert_not_null(got);
  cr_expect_eq(len, head);
  cr_expect_eq(memcmp(got, text, head), 0);
  free(got);
  free(text);
}

Test(logfile, last_line)
{
  const char *path = FTS_Path("passes.csv");
  LGF_File f;
  cr_assert_eq(LGF_Open(&f, path), 0);
  char buf[64];
  cr_expect_eq(LGF_LastLine(&f, buf, sizeof buf), -1, "an empty file has no line");
  append(&f, "pass,start_time\n");
  cr_expect_eq(LGF_LastLine(&f, buf, sizeof buf), 15);
  cr_expect_str_eq(buf, "pass,start_time");
  append(&f, "41,1709618400.000\n");
  append(&f, "42,1709618460.000\n");
  cr_expect_eq(LGF_LastLine(&f, buf, sizeof buf), 17);
  cr_expect_str_eq(buf, "42,1709618460.000");
  cr_expect_eq(LGF_LastLine(&f, buf, 6), 5, "cut to the buffer");
  cr_expect_str_eq(buf, "42,17");
  cr_expect_eq(LGF_LastLine(&f, buf, 0), -1);
  append(&f, "\n");
  cr_expect_eq(LGF_LastLine(&f, buf, sizeof buf), 0, "an empty last line");
  LGF_Close(&f);

  /* After a crash mid-line the last line is the last whole one. */
  static const char torn[] = "pass\n7,1\n8,2\n9,";
  cr_assert_eq(FTS_WriteFile(path, torn, strlen(torn)), 0);
  cr_assert_eq(LGF_Open(&f, path), 0);
  cr_expect_eq(LGF_LastLine(&f, buf, sizeof buf), 3);
  cr_expect_str_eq(buf, "8,2");
  LGF_Close(&f);
}

/* Runs in a child: the file may grow to `limit` bytes only, so write() stops
 * part way through a line (RLIMIT_FSIZE, POSIX setrlimit; with SIGXFSZ
 * ignored write() fails with EFBIG instead of killing the process). Exit
 * codes: 0 as expected, 10+ a failed step. */
static int short_write_child(const char *path, rlim_t limit)
{
  signal(SIGXFSZ, SIG_IGN);
  LGF_File f;
  if (LGF_Open(&f, path) != 0)
    return 10;
  struct rlimit rl = {limit, limit};
  if (setrlimit(RLIMIT_FSIZE, &rl) != 0)
    return 11;
  char line[200];
  memset(line, 'x', sizeof line - 1);
  line[sizeof line - 1] = '\n';
  errno = 0;
  if (LGF_Append(&f, line, sizeof line) != -1)
    return 12;
  if (errno != EFBIG)
    return 13;
  if (f.size != (long long)strlen("head\n1,a\n"))
    return 14;
  /* A line that fits still goes in, right after the last whole one. */
  if (LGF_Append(&f, "2,b\n", 4) != 0)
    return 15;
  LGF_Close(&f);
  return 0;
}

Test(logfile, a_short_write_is_taken_back)
{
  const char *path = FTS_Path("dress_cycles.csv");
  cr_assert_eq(FTS_WriteFile(path, "head\n1,a\n", 9), 0);
  fflush(NULL);
  pid_t pid = fork();
  cr_assert_geq(pid, 0);
  if (pid == 0)
    _exit(short_write_child(path, 9 + 50));
  int status;
  cr_assert_eq(waitpid(pid, &status, 0), pid);
  cr_assert(WIFEXITED(status), "child killed by signal %d", WIFSIGNALED(status) ? WTERMSIG(status) : 0);
  cr_expect_eq(WEXITSTATUS(status), 0, "child step %d failed", WEXITSTATUS(status));
  expect_content(path, "head\n1,a\n2,b\n");

  /* Nothing got out at all (the file is at its limit already): nothing to take back. */
  cr_assert_eq(FTS_WriteFile(path, "head\n1,a\n", 9), 0);
  pid = fork();
  cr_assert_geq(pid, 0);
  if (pid == 0) {
    signal(SIGXFSZ, SIG_IGN);
    LGF_File f;
    if (LGF_Open(&f, path) != 0)
      _exit(10);
    struct rlimit rl = {9, 9};
    if (setrlimit(RLIMIT_FSIZE, &rl) != 0)
      _exit(11);
    errno = 0;
    _exit(LGF_Append(&f, "2,b\n", 4) == -1 && errno == EFBIG ? 0 : 12);
  }
  cr_assert_eq(waitpid(pid, &status, 0), pid);
  cr_assert(WIFEXITED(status));
  cr_expect_eq(WEXITSTATUS(status), 0);
  expect_content(path, "head\n1,a\n");
}

/* The room LGF_Room reports is statvfs(3)'s f_bavail * f_frsize, for the file's
 * own file system (POSIX statvfs). */
Test(logfile, room_is_the_file_systems_free_space)
{
  LGF_File f;
  LGF_Init(&f);
  cr_assert_eq(LGF_Open(&f, FTS_Path("samples.csv")), 0);
  struct statvfs v;
  cr_assert_eq(statvfs(FTS_Path("samples.csv"), &v), 0);
  long long want = (long long)v.f_bavail * (long long)v.f_frsize, got = LGF_Room(&f);
  /* Other writers on the machine may take or free a little in between. */
  cr_expect(got > 0 && llabs(got - want) < 64LL << 20, "room %lld, statvfs %lld", got, want);
  LGF_Close(&f);
  cr_expect_eq(LGF_Room(&f), -1);
}
