/*
** build_model.c — model file -> generated C in the cache -> shared object
** -> dlopen -> struct eom_model.
**
** The cache key hashes the model text together with the identity of the
** running eomc binary (its size and modification time), the compiler
** command and the model ABI: a rebuilt eomc or another $CC never reuses a
** stale object.  A warm run therefore only parses and checks the model (for
** its name and its errors), then loads the object.  Every file lands in the
** cache through a temporary renamed into place, so concurrent runs and
** interrupted compiles never leave a broken object behind.
*/
#include "cli/build_model.h"

#include <assert.h>
#include <dlfcn.h>
#include <errno.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/time.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>

#include "cli/cmd.h"
#include "emit/emit_c.h"
#include "cli/frontend.h"
#include "emit/fsutil.h"
#include "emit/hash.h"
#include "sym/symbolic.h"

#ifndef EOMC_INCLUDEDIR
#define EOMC_INCLUDEDIR "/usr/local/include"
#endif
#ifndef EOMC_VERSION
#define EOMC_VERSION "unknown"
#endif

#define MAX_CC_WORDS 32

char *build_cache_root(void) {
  const char *v = getenv("EOMC_CACHE_DIR");
  if (v && *v) return strdup(v);
  v = getenv("XDG_CACHE_HOME");
  if (v && *v) return fs_join_path(v, "eomc");
  v = getenv("HOME");
  if (v && *v) return fs_join_path(v, ".cache/eomc");
  return NULL;
}

/* mkdir -p; 0 or -1 with errno. */
static int make_dirs(const char *path) {
  char *p = strdup(path);
  if (!p) return -1;
  for (char *s = p + 1; *s; s++) {
    if (*s != '/') continue;
    *s = '\0';
    if (mkdir(p, 0777) != 0 && errno != EEXIST) {
      free(p);
      return -1;
    }
    *s = '/';
  }
  int rc = mkdir(p, 0777) != 0 && errno != EEXIST ? -1 : 0;
  free(p);
  return rc;
}

/* Split $CC at blanks into argv words (no shell quoting: a compiler path
** with spaces is not supported). */
static int compiler_words(char *cc, char **words) {
  int n = 0;
  for (char *tok = strtok(cc, " \t"); tok && n < MAX_CC_WORDS; tok = strtok(NULL, " \t"))
    words[n++] = tok;
  return n;
}

/* Run argv (no shell); returns the exit status, or -1 when it cannot start. */
static int run_program(char *const argv[]) {
  pid_t pid = fork();
  if (pid < 0) return -1;
  if (pid == 0) {
    execvp(argv[0], argv);
    fprintf(stderr, "eomc: error: cannot run '%s': %s\n", argv[0], strerror(errno));
    _exit(127);
  }
  int status;
  while (waitpid(pid, &status, 0) < 0)
    if (errno != EINTR) return -1;
  if (WIFEXITED(status)) return WEXITSTATUS(status);
  return 128 + (WIFSIGNALED(status) ? WTERMSIG(status) : 0);
}

/* The cache key: model text, eomc identity, compiler, ABI. */
static void cache_key(const Frontend *fe, const char *cc, char hex[HASH_HEX_LEN + 1]) {
  struct stat st;
  char ident[512];
  memset(&st, 0, sizeof st);
  if (stat("/proc/self/exe", &st) != 0) memset(&st, 0, sizeof st);
  snprintf(ident, sizeof ident, "\n%s|%lld|%lld|%lld|%s|%d|%s", EOMC_VERSION,
           (long long)st.st_size, (long long)st.st_mtime, (long long)st.st_ino, cc,
           EOM_MODEL_ABI, EOMC_INCLUDEDIR);
  size_t lt = fe->src.len, li = strlen(ident);
  char *buf = malloc(lt + li + 1);
  if (!buf) {
    /* Without memory for the key, fall back to the text alone. */
    hash_hex(fe->src.text, lt, hex);
    return;
  }
  memcpy(buf, fe->src.text, lt);
  memcpy(buf + lt, ident, li);
  hash_hex(buf, lt + li, hex);
  free(buf);
}

/* ------------------------------------------------------------ progress */

/* A cold build of a big model (deriving, then compiling the C) can take a
** minute.  On a terminal a status line says what is going on, with the
** elapsed seconds, from the first second on (a one-second interval timer
** redraws it; cleared at the end).  Elsewhere (logs, scripts, tests) one
** line is printed at the start, only for a big model, decided by its size
** and not by the clock so that the same run always prints the same: six or
** more coordinates for the derivation, 64 KB or more of generated C for
** the compilation.  The handler only formats digits and calls write(),
** which is async-signal-safe. */
static volatile sig_atomic_t progress_seconds;
static char progress_text[256];
static size_t progress_len;
static int progress_tty, progress_said;
static struct sigaction progress_old_action;

static void progress_tick(int sig) {
  (void)sig;
  int saved = errno;
  char line[320], digits[24];
  size_t n = 0;
  int k = 0;
  progress_seconds++;
  line[n++] = '\r';
  memcpy(line + n, progress_text, progress_len);
  n += progress_len;
  for (long v = progress_seconds; v > 0 && k < 20; v /= 10) digits[k++] = (char)('0' + v % 10);
  memcpy(line + n, " (", 2);
  n += 2;
  while (k > 0) line[n++] = digits[--k];
  memcpy(line + n, " s) ", 4);
  n += 4;
  progress_said = 1;
  ssize_t w = write(STDERR_FILENO, line, n);
  (void)w;
  errno = saved;
}

/* Start saying `what` ("eomc: first run of P: ..."): on a terminal after a
** second and then each second; elsewhere at once when `big`. */
static void progress_start(const char *what, int big) {
  progress_len = (size_t)snprintf(progress_text, sizeof progress_text, "%s", what);
  if (progress_len >= sizeof progress_text) progress_len = sizeof progress_text - 1;
  progress_seconds = 0;
  progress_said = 0;
  progress_tty = isatty(STDERR_FILENO);
  if (!progress_tty) {
    if (big) fprintf(stderr, "%s\n", progress_text);
    return;
  }
  struct sigaction sa;
  memset(&sa, 0, sizeof sa);
  sa.sa_handler = progress_tick;
  sa.sa_flags = SA_RESTART;
  sigemptyset(&sa.sa_mask);
  sigaction(SIGALRM, &sa, &progress_old_action);
  struct itimerval tv = {{1, 0}, {1, 0}};
  setitimer(ITIMER_REAL, &tv, NULL);
}

static void progress_stop(void) {
  if (!progress_tty) return;
  struct itimerval off;
  memset(&off, 0, sizeof off);
  setitimer(ITIMER_REAL, &off, NULL);
  sigaction(SIGALRM, &progress_old_action, NULL);
  if (progress_tty && progress_said) fprintf(stderr, "\r%*s\r", (int)progress_len + 16, "");
}

/* Size in bytes of dir/P.c (0 when it cannot be read). */
static long generated_size(const char *dir, const char *prefix) {
  char path[4400];
  struct stat st;
  snprintf(path, sizeof path, "%s/%s.c", dir, prefix);
  return stat(path, &st) == 0 ? (long)st.st_size : 0;
}

/* Generate P.c/P.h into dir.  Returns 0 or an exit status (printed). */
static int generate(Frontend *fe, const char *path, const char *dir) {
  EomSystem sys;
  SymOptions so = {0, 0};
  char err[512], texthash[HASH_HEX_LEN + 1];
  if (frontend_derive(fe, &so, &sys) != 0 || frontend_check_inertia(fe, &sys, DIAG_ERROR) != 0) {
    sym_free(&sys);
    return EXIT_MODEL;
  }
  hash_hex(fe->src.text, fe->src.len, texthash);
  EmitOptions eo = {NULL, texthash, 0};
  int rc = 0;
  if (emit_c_to_dir(&fe->model, &sys, &eo, dir, err, sizeof err) != 0) {
    fprintf(stderr, "eomc: error: %s: %s\n", path, err);
    rc = strncmp(err, "the model", 9) == 0 ? EXIT_MODEL : EXIT_RUN;
  }
  sym_free(&sys);
  return rc;
}

/* The directory holding eom/model.h: the one configured at build time, or,
** for an installed eomc whose source tree is gone, PREFIX/include beside
** PREFIX/bin/eomc.  Writes it into buf (size cap). */
static void include_dir(char *buf, size_t cap) {
  char probe[8300], exe[4096];
  snprintf(buf, cap, "%s", EOMC_INCLUDEDIR);
  snprintf(probe, sizeof probe, "%s/eom/model.h", EOMC_INCLUDEDIR);
  if (access(probe, R_OK) == 0) return;
  ssize_t n = readlink("/proc/self/exe", exe, sizeof exe - 1);
  if (n <= 0) return;
  exe[n] = '\0';
  char *slash = strrchr(exe, '/');
  if (!slash) return;
  *slash = '\0';                    /* PREFIX/bin */
  snprintf(probe, sizeof probe, "%s/../include/eom/model.h", exe);
  if (access(probe, R_OK) == 0) snprintf(buf, cap, "%s/../include", exe);
}

/* cc -shared -fPIC -O2 -I<include> -o so.tmp P.c -lm, then rename. */
static int compile(const char *dir, const char *prefix, const char *cc_env, const char *so_path) {
  char *cc = strdup(cc_env);
  char *src = NULL, tmp[64], inc[4200];
  char *argv[MAX_CC_WORDS + 16];
  int rc = EXIT_RUN;
  if (!cc) goto out;
  int n = compiler_words(cc, argv);
  if (n == 0) {
    fprintf(stderr, "eomc: error: $CC is empty\n");
    goto out;
  }
  size_t srclen = strlen(dir) + strlen(prefix) + 4;
  src = malloc(srclen);
  char *tmp_path = NULL;
  if (!src) goto out;
  snprintf(src, srclen, "%s/%s.c", dir, prefix);
  snprintf(tmp, sizeof tmp, "model.so.tmp.%ld", (long)getpid());
  tmp_path = fs_join_path(dir, tmp);
  if (!tmp_path) goto out;
  memcpy(inc, "-I", 3);
  include_dir(inc + 2, sizeof inc - 2);
  const char *tail[] = {"-std=c99", "-O2", "-fPIC", "-shared", inc, "-o", tmp_path, src, "-lm",
                        NULL};
  for (size_t i = 0; i < sizeof tail / sizeof tail[0]; i++) argv[n++] = (char *)tail[i];
  int status = run_program(argv);
  if (status != 0) {
    fprintf(stderr, "eomc: error: the C compiler '%s' failed (status %d) on %s\n", argv[0],
            status, src);
    unlink(tmp_path);
  } else if (rename(tmp_path, so_path) != 0) {
    fprintf(stderr, "eomc: error: cannot rename %s to %s: %s\n", tmp_path, so_path,
            strerror(errno));
    unlink(tmp_path);
  } else {
    rc = 0;
  }
  free(tmp_path);
out:
  free(cc);
  free(src);
  return rc;
}

/* dlopen so_path and find PREFIX_model.  0, or -1 with a message in err. */
static int load(const char *so_path, const char *prefix, BuiltModel *out, char *err,
                size_t errlen) {
  char sym[512];
  void *h = dlopen(so_path, RTLD_NOW | RTLD_LOCAL);
  if (!h) {
    snprintf(err, errlen, "cannot load %s: %s", so_path, dlerror());
    return -1;
  }
  snprintf(sym, sizeof sym, "%s_model", prefix);
  const struct eom_model *m = dlsym(h, sym);
  if (!m) {
    snprintf(err, errlen, "%s has no symbol %s", so_path, sym);
    dlclose(h);
    return -1;
  }
  if (m->abi != EOM_MODEL_ABI || m->nq < 0 || m->nu < 0 || m->np < 0 || m->ny < 0 ||
      !m->accel || !m->forcing || !m->mass) {
    snprintf(err, errlen, "%s: model descriptor of another eomc version (abi %d, want %d)",
             so_path, m->abi, EOM_MODEL_ABI);
    dlclose(h);
    return -1;
  }
  out->handle = h;
  out->model = m;
  return 0;
}

static int build(const char *path, const char *refuse_attitudes, BuiltModel *out) {
  Frontend fe;
  char key[HASH_HEX_LEN + 1], err[1024];
  char *root = NULL, *so_path = NULL;
  const char *cc = getenv("CC");
  int rc;
  assert(path && out);
  memset(out, 0, sizeof *out);
  if (!cc || !*cc) cc = "cc";

  rc = frontend_open(&fe, path, 0);
  if (rc != 0) return rc;
  if (refuse_attitudes && fe.model.nattitudes > 0) {
    /* their perturbations need 3 parameters per attitude, not 4 */
    int printed = fe.diag.nmsgs;
    diag_error(&fe.diag, fe.model.attitudes[0]->loc,
               "attitude '%s': 'eomc %s' does not handle models with attitudes yet ('eomc sim' "
               "runs them, 'eomc gen' writes their C)", fe.model.attitudes[0]->name, refuse_attitudes);
    diag_print_from(&fe.diag, printed, stderr);
    frontend_free(&fe);
    return EXIT_MODEL;
  }
  rc = EXIT_RUN;
  root = build_cache_root();
  if (!root) {
    fprintf(stderr, "eomc: error: no cache directory: set EOMC_CACHE_DIR, XDG_CACHE_HOME or HOME\n");
    goto out;
  }
  cache_key(&fe, cc, key);
  out->dir = fs_join_path(root, key);
  if (!out->dir || make_dirs(out->dir) != 0) {
    fprintf(stderr, "eomc: error: cannot create the cache directory %s: %s\n",
            out->dir ? out->dir : root, strerror(errno));
    goto out;
  }
  so_path = fs_join_path(out->dir, "model.so");
  if (!so_path) goto out;
  const char *prefix = fe.model.name;
  if (access(so_path, R_OK) == 0 && load(so_path, prefix, out, err, sizeof err) == 0) {
    out->cache_hit = 1;
    rc = 0;
    goto out;
  }
  /* Cold (or unusable) cache entry: generate, compile, load. */
  char what[300];
  snprintf(what, sizeof what, "eomc: first run of %.100s: deriving its equations of motion "
           "(cached for later runs)...", prefix);
  progress_start(what, fe.model.ncoords >= 6);
  rc = generate(&fe, path, out->dir);
  progress_stop();
  if (rc != 0) goto out;
  long c_bytes = generated_size(out->dir, prefix);
  snprintf(what, sizeof what, "eomc: first run of %.100s: compiling %ld KB of generated C with "
           "%.60s...", prefix, (c_bytes + 1023) / 1024, cc);
  progress_start(what, c_bytes >= 64 * 1024);
  rc = compile(out->dir, prefix, cc, so_path);
  progress_stop();
  if (rc != 0) goto out;
  if (load(so_path, prefix, out, err, sizeof err) != 0) {
    fprintf(stderr, "eomc: error: %s\n", err);
    rc = EXIT_RUN;
    goto out;
  }
  rc = 0;
out:
  if (rc != 0) built_model_close(out);
  free(root);
  free(so_path);
  frontend_free(&fe);
  return rc;
}

int build_model(const char *path, BuiltModel *out) { return build(path, NULL, out); }

int build_model_without_attitudes(const char *path, const char *verb, BuiltModel *out) {
  assert(verb);
  return build(path, verb, out);
}

void built_model_close(BuiltModel *b) {
  if (!b) return;
  if (b->handle) dlclose(b->handle);
  free(b->dir);
  memset(b, 0, sizeof *b);
}
