/*
** testutil.c — what the end-to-end tests share: run programs, handle
** temporary files, name the eomc, sources and C compiler under test, read
** `eomc sim`'s CSV tables, and the main() of a suite with its two passes
** (ordinary and clang).
**
** Output is captured through temporary files rather than pipes so a chatty
** child can never deadlock the test.
*/
#include "testutil.h"

#include <assert.h>
#include <dirent.h>
#include <fcntl.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#ifndef SRCDIR
#define SRCDIR "."
#endif
#ifndef BUILDDIR
#define BUILDDIR "."
#endif

static int the_clang_pass;

const char *eomc(void) { return env_or("EOMC", BUILDDIR "/eomc"); }
const char *srcdir(void) { return env_or("SRCDIR", SRCDIR); }
int clang_pass(void) { return the_clang_pass; }

const char *cc(void) {
  if (!the_clang_pass) return env_or("CC", "cc");
  const char *clang = getenv("CLANG");
  assert(clang && *clang); /* run_test_main skips the pass without one */
  return clang;
}

int run_test_main(int argc, char **argv, Suite *(*make_suite)(void)) {
  if (argc > 2 || (argc == 2 && strcmp(argv[1], "clang") != 0)) {
    fprintf(stderr, "usage: %s [clang]\n", argv[0]);
    return EXIT_FAILURE;
  }
  if (argc == 2) {
    const char *clang = getenv("CLANG");
    if (!clang || !*clang) {
      printf("SKIP: configure found no clang ($CLANG is empty)\n");
      return TEST_SKIPPED;
    }
    the_clang_pass = 1;
  }
  SRunner *sr = srunner_create(make_suite());
  srunner_run_all(sr, CK_NORMAL);
  int failed = srunner_ntests_failed(sr);
  srunner_free(sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}

int count_lines(const char *s) {
  int n = 0;
  for (; *s; s++) n += *s == '\n';
  return n;
}

int count_entries(const char *dir) {
  DIR *d = opendir(dir);
  if (!d) return -1;
  int n = 0;
  struct dirent *e;
  while ((e = readdir(d)))
    if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0) n++;
  closedir(d);
  return n;
}

const char *env_or(const char *name, const char *fallback) {
  const char *v = getenv(name);
  return v && *v ? v : fallback;
}

char *read_file(const char *path, size_t *len) {
  FILE *f = fopen(path, "rb");
  if (!f) return NULL;
  size_t cap = 4096, n = 0;
  char *buf = malloc(cap);
  size_t got;
  while (buf && (got = fread(buf + n, 1, cap - n - 1, f)) > 0) {
    n += got;
    if (cap - n - 1 == 0) buf = realloc(buf, cap *= 2);
  }
  fclose(f);
  if (!buf) return NULL;
  buf[n] = '\0';
  if (len) *len = n;
  return buf;
}

static int capture_fd(char *templ) {
  int fd = mkstemp(templ);
  if (fd >= 0) unlink(templ);
  return fd;
}

static char *slurp_fd(int fd) {
  off_t size = lseek(fd, 0, SEEK_END);
  if (size < 0) size = 0;
  char *buf = malloc((size_t)size + 1);
  if (!buf) return NULL;
  lseek(fd, 0, SEEK_SET);
  ssize_t n = 0, got;
  while (n < size && (got = read(fd, buf + n, (size_t)(size - n))) > 0) n += got;
  buf[n] = '\0';
  close(fd);
  return buf;
}

RunResult run_argv(char *const argv[]) {
  RunResult r = {-1, NULL, NULL};
  char out_t[] = "/tmp/eomc-test-outXXXXXX", err_t[] = "/tmp/eomc-test-errXXXXXX";
  int out_fd = capture_fd(out_t), err_fd = capture_fd(err_t);
  if (out_fd < 0 || err_fd < 0) return r;
  fflush(NULL);
  pid_t pid = fork();
  if (pid == 0) {
    int devnull = open("/dev/null", O_RDONLY);
    if (devnull >= 0) dup2(devnull, 0);
    dup2(out_fd, 1);
    dup2(err_fd, 2);
    execvp(argv[0], argv);
    _exit(127);
  }
  int st = 0;
  if (pid > 0) waitpid(pid, &st, 0);
  r.status = pid < 0 ? -1 : WIFEXITED(st) ? WEXITSTATUS(st) : 128 + WTERMSIG(st);
  r.out = slurp_fd(out_fd);
  r.err = slurp_fd(err_fd);
  return r;
}

void run_free(RunResult *r) {
  free(r->out);
  free(r->err);
  r->out = r->err = NULL;
}

char *make_temp_dir(void) {
  char templ[] = "/tmp/eomc-test-XXXXXX";
  char *d = mkdtemp(templ);
  return d ? strdup(d) : NULL;
}

char *write_file(const char *dir, const char *name, const char *data, size_t len) {
  size_t n = strlen(dir) + strlen(name) + 2;
  char *path = malloc(n);
  snprintf(path, n, "%s/%s", dir, name);
  FILE *f = fopen(path, "wb");
  if (f) {
    fwrite(data, 1, len, f);
    fclose(f);
  }
  return path;
}

void remove_tree(const char *path) {
  DIR *d = opendir(path);
  if (d) {
    struct dirent *e;
    while ((e = readdir(d))) {
      if (!strcmp(e->d_name, ".") || !strcmp(e->d_name, "..")) continue;
      size_t n = strlen(path) + strlen(e->d_name) + 2;
      char *p = malloc(n);
      snprintf(p, n, "%s/%s", path, e->d_name);
      struct stat st;
      if (lstat(p, &st) == 0 && S_ISDIR(st.st_mode)) remove_tree(p);
      else unlink(p);
      free(p);
    }
    closedir(d);
  }
  rmdir(path);
}

int read_numbers(const char *s, double *v, int max) {
  int n = 0;
  char *e;
  while (n < max) {
    double d = strtod(s, &e);
    if (e == s) break;
    v[n++] = d;
    s = e;
  }
  return n;
}

static int cmp_paths(const void *a, const void *b) {
  return strcmp(*(char *const *)a, *(char *const *)b);
}

char **model_files(const char *dir, int *n) {
  DIR *d = opendir(dir);
  *n = 0;
  if (!d) return NULL;
  size_t cap = 16;
  char **paths = malloc(cap * sizeof *paths);
  struct dirent *e;
  while (paths && (e = readdir(d)) != NULL) {
    size_t len = strlen(e->d_name);
    if (len <= 4 || strcmp(e->d_name + len - 4, ".eom") != 0) continue;
    if ((size_t)*n + 1 >= cap) {
      char **grown = realloc(paths, 2 * cap * sizeof *paths);
      if (!grown) break;
      paths = grown;
      cap *= 2;
    }
    char *path = malloc(strlen(dir) + len + 2);
    if (!path) break;
    sprintf(path, "%s/%s", dir, e->d_name);
    paths[(*n)++] = path;
  }
  closedir(d);
  if (!paths) return NULL;
  qsort(paths, (size_t)*n, sizeof *paths, cmp_paths);
  paths[*n] = NULL;
  return paths;
}

static char *scratch_cache, *scratch_work;

void scratch_setup(void) {
  scratch_cache = make_temp_dir();
  scratch_work = make_temp_dir();
  setenv("EOMC_CACHE_DIR", scratch_cache, 1);
}

void scratch_teardown(void) {
  remove_tree(scratch_cache);
  remove_tree(scratch_work);
  free(scratch_cache);
  free(scratch_work);
  scratch_cache = scratch_work = NULL;
}

char *scratch_dir(void) {
  assert(scratch_work); /* only inside the fixture */
  return scratch_work;
}

char *scratch_path(const char *name) {
  static char buf[4][4096];
  static int k;
  k = (k + 1) % 4;
  snprintf(buf[k], sizeof buf[k], "%s/%s", scratch_dir(), name);
  return buf[k];
}

char *example_file(const char *name) {
  static char buf[4][4096];
  static int k;
  k = (k + 1) % 4;
  snprintf(buf[k], sizeof buf[k], "%s/examples/%s", srcdir(), name);
  return buf[k];
}

const char *set_param_arg(const char *name, double v) {
  static char buf[16][128];
  static int k;
  k = (k + 1) % 16;
  snprintf(buf[k], sizeof buf[k], "--set=%s=%.17g", name, v);
  return buf[k];
}

/* argv = eomc, the nhead words of head, then the NULL-ended list ap. */
static RunResult run_eomc_list(const char *const *head, int nhead, va_list ap) {
  char *argv[64];
  int n = 0;
  argv[n++] = (char *)eomc();
  for (int i = 0; i < nhead; i++) argv[n++] = (char *)head[i];
  for (char *a; (a = va_arg(ap, char *)) != NULL;) {
    ck_assert_msg(n < 63, "too many arguments for eomc");
    argv[n++] = a;
  }
  argv[n] = NULL;
  return run_argv(argv);
}

RunResult eomc_run(const char *verb, ...) {
  va_list ap;
  va_start(ap, verb);
  RunResult r = run_eomc_list(&verb, 1, ap);
  va_end(ap);
  return r;
}

void csv_free(CsvTable *t) {
  for (int i = 0; i < t->ncols; i++) free(t->names[i]);
  free(t->names);
  free(t->v);
  memset(t, 0, sizeof *t);
}

CsvTable csv_read(const char *path) {
  CsvTable t = {0, 0, NULL, NULL};
  char *text = read_file(path, NULL);
  ck_assert_msg(text != NULL, "cannot read %s", path);
  char *line = strtok(text, "\n");
  ck_assert(line != NULL);
  for (char *s = line; s; s = strchr(s, ',') ? strchr(s, ',') + 1 : NULL) t.ncols++;
  t.names = calloc((size_t)t.ncols, sizeof(char *));
  ck_assert(t.names != NULL);
  char *s = line;
  for (int i = 0; i < t.ncols; i++) {
    size_t n = strcspn(s, ",");
    t.names[i] = malloc(n + 1);
    ck_assert(t.names[i] != NULL);
    memcpy(t.names[i], s, n);
    t.names[i][n] = '\0';
    s += n + 1;
  }
  int cap = 64;
  t.v = malloc((size_t)cap * t.ncols * sizeof(double));
  ck_assert(t.v != NULL);
  while ((line = strtok(NULL, "\n"))) {
    if (t.nrows == cap) {
      cap *= 2;
      t.v = realloc(t.v, (size_t)cap * t.ncols * sizeof(double));
      ck_assert(t.v != NULL);
    }
    char *p = line;
    for (int i = 0; i < t.ncols; i++) {
      char *end;
      t.v[(size_t)t.nrows * t.ncols + i] = strtod(p, &end);
      ck_assert_msg(end != p, "bad number in row %d of %s", t.nrows + 1, path);
      p = *end == ',' ? end + 1 : end;
    }
    t.nrows++;
  }
  free(text);
  return t;
}

int csv_col(const CsvTable *t, const char *name) {
  for (int i = 0; i < t->ncols; i++)
    if (strcmp(t->names[i], name) == 0) return i;
  ck_abort_msg("no column %s", name);
  return -1;
}

CsvTable sim_csv(const char *model, const char *out, ...) {
  const char *head[] = {"sim", model, "-o", out};
  va_list ap;
  va_start(ap, out);
  RunResult r = run_eomc_list(head, 4, ap);
  va_end(ap);
  ck_assert_msg(r.status == 0, "eomc sim %s: status %d\n%s", model, r.status, r.err);
  run_free(&r);
  return csv_read(out);
}
