/*
** cmd_gen.c — `eomc gen`: derive a model's equations of motion and write P.h, P.c.
**
**   eomc gen MODEL.eom... [-o DIR] [--prefix NAME] [--no-cse] [--no-split]
**                         [--float] [--only LIST] [--max-seconds S] [--depfile FILE] [--quiet | --verbose]
**
** Several models are generated one after the other into the same DIR; the
** first failure stops the run (files already written stay: each is complete).
**
** Exit status: 0 written (or already up to date), 1 model error, 2 usage
** error (bad option, unreadable model, missing or read-only DIR), 3 the files
** could not be written.
*/
#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>
#include "cli/cmd.h"
#include "cli/conserved_report.h"
#include "emit/depfile.h"
#include "emit/emit_c.h"
#include "cli/frontend.h"
#include "emit/fsutil.h"
#include "emit/hash.h"
#include "sym/symbolic.h"

static const char gen_usage[] =
  "usage: eomc gen MODEL.eom... [-o DIR] [--prefix NAME] [--no-cse] [--no-split]\n"
  "                             [--float] [--only LIST] [--max-seconds S] [--depfile FILE]\n"
  "                             [--quiet | --verbose]\n"
  "\n"
  "Derive the equations of motion of each MODEL.eom and write DIR/P.h and\n"
  "DIR/P.c, standalone C99 (P is the model's name, or NAME).  Files whose\n"
  "content did not change are not rewritten.\n"
  "\n"
  "options:\n"
  "  -o DIR            directory for the two files (default: .); it must exist\n"
  "  --prefix NAME     C prefix of every generated symbol and file (a C identifier)\n"
  "  --no-cse          no common-subexpression elimination (for comparisons)\n"
  "  --no-split        write every function as one body, however large (a large\n"
  "                    function is otherwise split into helpers compilers digest faster)\n"
  "  --float           single-precision code (float, 1.5f, sinf) for small processors;\n"
  "                    it has no descriptor P_model (the runtime works in double)\n"
  "  --only LIST       write only these functions (comma-separated names after the\n"
  "                    prefix, e.g. accel,jacobian) and what they need; the\n"
  "                    descriptor's pointers to the others are 0\n"
  "  --max-seconds S   give up when the derivation takes longer than S seconds\n"
  "  --max-memory MB   give up when the derivation needs more than MB megabytes\n"
  "  --depfile FILE    also write a Make-syntax rule: DIR/P.h DIR/P.c: MODEL.eom\n"
  "                    (with several models: every output depends on every model)\n"
  "  -q, --quiet       print errors only (no warnings or notes)\n"
  "  -v, --verbose     say what was derived and written, with timings\n"
  "  -h, --help        this text\n";

static int usage_error(const char *fmt, const char *arg) {
  fputs("eomc gen: ", stderr);
  fprintf(stderr, fmt, arg);
  fputs("\n(try 'eomc gen --help')\n", stderr);
  return EXIT_USAGE;
}

static int is_identifier(const char *s) {
  if (!(isalpha((unsigned char)*s) || *s == '_')) return 0;
  for (; *s; s++)
    if (!(isalnum((unsigned char)*s) || *s == '_')) return 0;
  return 1;
}

typedef struct GenArgs {
  const char **models;   /* argv entries, nmodels of them */
  int nmodels;
  const char *dir, *prefix, *depfile, *only;
  int no_cse, no_split, single, quiet, verbose;
  double max_seconds;
  double max_memory;     /* MB of address space during the derivation; 0: no limit */
} GenArgs;

/* Options may come before or after the model; `--opt=value` works too. */
static int parse_args(int argc, char **argv, GenArgs *a, int *help) {
  *help = 0;
  for (int i = 1; i < argc; i++) {
    const char *arg = argv[i], *val = NULL;
    const char *eq = strncmp(arg, "--", 2) == 0 ? strchr(arg, '=') : NULL;
    char name[64];
    if (cmd_is_help(arg)) {
      *help = 1;
      return 0;
    }
    if (arg[0] != '-' || strcmp(arg, "-") == 0) {
      a->models[a->nmodels++] = arg;
      continue;
    }
    if (eq && (size_t)(eq - arg) < sizeof name) {
      memcpy(name, arg, (size_t)(eq - arg));
      name[eq - arg] = '\0';
      val = eq + 1;
    } else {
      snprintf(name, sizeof name, "%s", arg);
    }
    if (strcmp(name, "--no-cse") == 0 && !val) {
      a->no_cse = 1;
      continue;
    }
    if (strcmp(name, "--no-split") == 0 && !val) {
      a->no_split = 1;
      continue;
    }
    if (strcmp(name, "--float") == 0 && !val) {
      a->single = 1;
      continue;
    }
    if ((strcmp(name, "-q") == 0 || strcmp(name, "--quiet") == 0) && !val) {
      a->quiet = 1;
      continue;
    }
    if ((strcmp(name, "-v") == 0 || strcmp(name, "--verbose") == 0) && !val) {
      a->verbose = 1;
      continue;
    }
    int takes = strcmp(name, "-o") == 0 || strcmp(name, "--output") == 0 ||
                strcmp(name, "--prefix") == 0 || strcmp(name, "--max-seconds") == 0 ||
                strcmp(name, "--max-memory") == 0 || strcmp(name, "--only") == 0 ||
                strcmp(name, "--depfile") == 0;
    if (!takes) return usage_error("unknown option '%s'", arg);
    if (!val) {
      if (i + 1 >= argc) return usage_error("option '%s' needs a value", arg);
      val = argv[++i];
    }
    if (strcmp(name, "-o") == 0 || strcmp(name, "--output") == 0) {
      if (strcmp(val, "-") == 0)
        return usage_error("%s: gen writes two files (P.h and P.c), so it needs a directory", "-o -");
      if (!*val) return usage_error("%s: the output directory is empty", "-o");
      a->dir = val;
    } else if (strcmp(name, "--prefix") == 0) {
      if (!is_identifier(val) || strlen(val) > 200)
        return usage_error("--prefix '%s' is not a C identifier (letters, digits, _; not a digit first)", val);
      a->prefix = val;
    } else if (strcmp(name, "--only") == 0) {
      if (!val[strspn(val, ", ")])
        return usage_error("%s: the list of functions is empty", "--only");
      a->only = val;
    } else if (strcmp(name, "--max-memory") == 0) {
      char *end;
      errno = 0;
      a->max_memory = strtod(val, &end);
      if (end == val || *end || errno || !(a->max_memory >= 1) || a->max_memory > 1e9)
        return usage_error("--max-memory '%s' is not a number of megabytes (at least 1)", val);
    } else if (strcmp(name, "--max-seconds") == 0) {
      char *end;
      errno = 0;
      a->max_seconds = strtod(val, &end);
      if (end == val || *end || errno || !(a->max_seconds > 0) || !isfinite(a->max_seconds))
        return usage_error("--max-seconds '%s' is not a positive number of seconds", val);
    } else {
      if (!*val) return usage_error("%s: the depfile name is empty", "--depfile");
      a->depfile = val;
    }
  }
  if (a->nmodels == 0) return usage_error("%s", "no model file given");
  if (a->quiet && a->verbose) return usage_error("%s", "--quiet and --verbose exclude each other");
  if (a->prefix && a->nmodels > 1)
    return usage_error("--prefix '%s' names one model's symbols: give one model with it", a->prefix);
  for (int i = 0; i < a->nmodels; i++) {
    if (strcmp(a->models[i], "-") == 0 && a->nmodels > 1)
      return usage_error("%s", "'-' (stdin) can only be the only model");
    for (int j = 0; j < i; j++)
      if (strcmp(a->models[i], a->models[j]) == 0)
        return usage_error("model '%s' given more than once", a->models[i]);
  }
  return 0;
}

/* DIR/P.h and DIR/P.c of every model depend on every model file. */
static int write_depfile(const GenArgs *a, char *const *names) {
  char err[512];
  int n = 2 * a->nmodels, rc = 0;
  char **targets = calloc((size_t)n, sizeof *targets);
  if (!targets) {
    fputs("eomc: error: out of memory\n", stderr);
    return EXIT_RUN;
  }
  for (int i = 0; i < a->nmodels && rc == 0; i++) {
    size_t len = strlen(a->dir) + strlen(names[i]) + 4;
    targets[2 * i] = malloc(len);
    targets[2 * i + 1] = malloc(len);
    if (!targets[2 * i] || !targets[2 * i + 1]) {
      fputs("eomc: error: out of memory\n", stderr);
      rc = EXIT_RUN;
      break;
    }
    snprintf(targets[2 * i], len, "%s/%s.h", a->dir, names[i]);
    snprintf(targets[2 * i + 1], len, "%s/%s.c", a->dir, names[i]);
  }
  if (rc == 0 && depfile_write(a->depfile, (const char *const *)targets, n, a->models, a->nmodels,
                               err, sizeof err) != 0) {
    fprintf(stderr, "eomc: error: %s\n", err);
    rc = EXIT_RUN;
  }
  for (int i = 0; i < n; i++) free(targets[i]);
  free(targets);
  return rc;
}

static double seconds_since(const struct timespec *t0) {
  struct timespec t1;
  clock_gettime(CLOCK_MONOTONIC, &t1);
  return (double)(t1.tv_sec - t0->tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0->tv_nsec);
}

/* Derive and write model i; its C prefix goes to names[i] (malloc'd).  Two
** models of one run must not write the same files. */
static int gen_one(const GenArgs *a, int i, char **names) {
  const char *path = a->models[i];
  char **name = &names[i];
  char err[512];
  struct timespec t0;
  clock_gettime(CLOCK_MONOTONIC, &t0);
  Frontend fe;
  int rc = frontend_open(&fe, path, a->quiet);
  if (rc != 0) return rc;

  EomSystem sys;
  SymOptions so = {a->no_cse, a->max_seconds};
  /* The limit covers the derivation only: the front end and the emitter
  ** need little, and the symbolic core turns a failed allocation into an
  ** error instead of a crash. */
  struct rlimit old;
  int limited = a->max_memory > 0 && getrlimit(RLIMIT_AS, &old) == 0;
  if (limited) {
    struct rlimit lim = old;
    rlim_t want = (rlim_t)(a->max_memory * 1048576.0);
    if (old.rlim_max == RLIM_INFINITY || want < old.rlim_max) lim.rlim_cur = want;
    limited = setrlimit(RLIMIT_AS, &lim) == 0;
  }
  int failed = frontend_derive(&fe, &so, &sys);
  if (limited) setrlimit(RLIMIT_AS, &old);
  if (failed && limited)
    fprintf(stderr, "eomc: note: the derivation ran with --max-memory %g MB\n", a->max_memory);
  if (failed) {
    sym_free(&sys);
    frontend_free(&fe);
    return EXIT_MODEL;
  }
  /* The inverse dynamics of such a model are still of use: written, with a warning. */
  frontend_check_inertia(&fe, &sys, DIAG_WARNING);
  if (!a->quiet) report_identifiability(&fe.model, &sys, "eomc: note: ", stderr);
  double derive_s = seconds_since(&t0);

  char hash[HASH_HEX_LEN + 1];
  hash_hex(fe.src.text, fe.src.len, hash);
  EmitOptions eo = {.prefix = a->prefix, .model_hash = hash, .no_cse = a->no_cse,
                    .no_split = a->no_split, .single_precision = a->single,
                    .only = a->only};
  int replaced = 0;
  const char *P = a->prefix ? a->prefix : fe.model.name;
  *name = strdup(P);
  for (int j = 0; j < i && rc == 0; j++)
    if (strcmp(names[j], P) == 0) {
      fprintf(stderr, "eomc: error: '%s' and '%s' are both model '%s' and would write the same "
              "%s.h and %s.c (give one a different `model` name)\n", a->models[j], path, P, P, P);
      rc = EXIT_USAGE;
    }
  if (rc != 0) {
    /* nothing written */
  } else if (emit_c_files(&fe.model, &sys, &eo, a->dir, &replaced, err, sizeof err) != 0) {
    /* The emitter words problems of the model itself as "the model ...", a
    ** bad --only list as "--only: ..."; the rest are failures to write. */
    fprintf(stderr, "eomc: error: %s: %s\n", path, err);
    rc = strncmp(err, "the model", 9) == 0 ? EXIT_MODEL
       : strncmp(err, "--only", 6) == 0 ? EXIT_USAGE : EXIT_RUN;
  } else if (a->verbose) {
    /* Say what happened to the files: written, or left as they were. */
    char what[1200];
    if (replaced == (EMIT_WROTE_HEADER | EMIT_WROTE_SOURCE))
      snprintf(what, sizeof what, "wrote %s/%s.h and %s/%s.c", a->dir, P, a->dir, P);
    else if (replaced)
      snprintf(what, sizeof what, "wrote %s/%s.%c (%s/%s.%c up to date)", a->dir, P,
               replaced == EMIT_WROTE_HEADER ? 'h' : 'c', a->dir, P,
               replaced == EMIT_WROTE_HEADER ? 'c' : 'h');
    else
      snprintf(what, sizeof what, "%s/%s.h and %s/%s.c already up to date (not rewritten)",
               a->dir, P, a->dir, P);
    fprintf(stderr, "eomc: %s: %d coordinate%s, %d graph nodes; derived in %.3f s, %s after "
            "%.3f s\n", path, sys.nq, sys.nq == 1 ? "" : "s", sys.g.nnodes, derive_s, what,
            seconds_since(&t0));
  }
  if (!*name && rc == 0) {
    fputs("eomc: error: out of memory\n", stderr);
    rc = EXIT_RUN;
  }
  sym_free(&sys);
  frontend_free(&fe);
  return rc;
}

int cmd_gen(int argc, char **argv) {
  GenArgs a;
  int help, rc;
  char err[512];
  memset(&a, 0, sizeof a);
  a.dir = ".";
  a.models = calloc((size_t)argc, sizeof *a.models);
  char **names = calloc((size_t)argc, sizeof *names);
  if (!a.models || !names) {
    free(a.models);
    free(names);
    fputs("eomc: error: out of memory\n", stderr);
    return EXIT_RUN;
  }
  rc = parse_args(argc, argv, &a, &help);
  if (rc == 0 && help) fputs(gen_usage, stdout);
  /* Check the directory first: no derivation for nothing. */
  if (rc == 0 && !help && fs_check_dir(a.dir, err, sizeof err) != 0) {
    fprintf(stderr, "eomc: error: %s\n", err);
    rc = EXIT_USAGE;
  }
  for (int i = 0; rc == 0 && !help && i < a.nmodels; i++) rc = gen_one(&a, i, names);
  if (rc == 0 && !help && a.depfile) rc = write_depfile(&a, names);
  for (int i = 0; i < argc; i++) free(names[i]);
  free(names);
  free(a.models);
  return rc;
}
