/*
** cmd_gen.c — `eomc gen`: derive a model's equations of motion and write P.h, P.c.
**
**   eomc gen MODEL.eom [-o DIR] [--prefix NAME] [--no-cse] [--max-seconds S]
**                      [--depfile FILE]
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
#include "cmd.h"
#include "conserved_report.h"
#include "depfile.h"
#include "emit_c.h"
#include "frontend.h"
#include "fsutil.h"
#include "hash.h"
#include "symbolic.h"

static const char gen_usage[] =
  "usage: eomc gen MODEL.eom [-o DIR] [--prefix NAME] [--no-cse] [--max-seconds S]\n"
  "                          [--depfile FILE]\n"
  "\n"
  "Derive the equations of motion of MODEL.eom and write DIR/P.h and DIR/P.c,\n"
  "standalone C99 (P is the model's name, or NAME).\n"
  "\n"
  "options:\n"
  "  -o DIR            directory for the two files (default: .); it must exist\n"
  "  --prefix NAME     C prefix of every generated symbol and file (a C identifier)\n"
  "  --no-cse          no common-subexpression elimination (for comparisons)\n"
  "  --max-seconds S   give up when the derivation takes longer than S seconds\n"
  "  --depfile FILE    also write a Make-syntax rule: DIR/P.h DIR/P.c: MODEL.eom\n"
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
  const char *model, *dir, *prefix, *depfile;
  int no_cse;
  double max_seconds;
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
      if (a->model) return usage_error("more than one model given ('%s')", arg);
      a->model = arg;
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
    int takes = strcmp(name, "-o") == 0 || strcmp(name, "--output") == 0 ||
                strcmp(name, "--prefix") == 0 || strcmp(name, "--max-seconds") == 0 ||
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
  if (!a->model) return usage_error("%s", "no model file given");
  return 0;
}

static int write_depfile(const GenArgs *a, const char *P) {
  char err[512];
  size_t n = strlen(a->dir) + strlen(P) + 4;
  char *h = malloc(n), *c = malloc(n);
  int rc = 0;
  if (!h || !c) {
    free(h);
    free(c);
    fputs("eomc: error: out of memory\n", stderr);
    return EXIT_RUN;
  }
  snprintf(h, n, "%s/%s.h", a->dir, P);
  snprintf(c, n, "%s/%s.c", a->dir, P);
  const char *targets[] = {h, c};
  const char *deps[] = {a->model};
  if (depfile_write(a->depfile, targets, 2, deps, 1, err, sizeof err) != 0) {
    fprintf(stderr, "eomc: error: %s\n", err);
    rc = EXIT_RUN;
  }
  free(h);
  free(c);
  return rc;
}

int cmd_gen(int argc, char **argv) {
  GenArgs a = {NULL, ".", NULL, NULL, 0, 0.0};
  int help, rc;
  char err[512];
  if ((rc = parse_args(argc, argv, &a, &help)) != 0) return rc;
  if (help) {
    fputs(gen_usage, stdout);
    return 0;
  }
  /* Check the directory first: no derivation for nothing. */
  if (fs_check_dir(a.dir, err, sizeof err) != 0) {
    fprintf(stderr, "eomc: error: %s\n", err);
    return EXIT_USAGE;
  }

  Frontend fe;
  rc = frontend_open(&fe, a.model);
  if (rc != 0) return rc;

  EomSystem sys;
  SymOptions so = {a.no_cse, a.max_seconds};
  if (frontend_derive(&fe, &so, &sys) != 0) {
    sym_free(&sys);
    frontend_free(&fe);
    return EXIT_MODEL;
  }
  report_identifiability(&fe.model, &sys, "eomc: note: ", stderr);

  char hash[HASH_HEX_LEN + 1];
  hash_hex(fe.src.text, fe.src.len, hash);
  EmitOptions eo = {a.prefix, hash, a.no_cse};
  const char *P = a.prefix ? a.prefix : fe.model.name;
  rc = 0;
  if (emit_c_to_dir(&fe.model, &sys, &eo, a.dir, err, sizeof err) != 0) {
    /* The emitter words problems of the model itself as "the model ..."; the
    ** rest are failures to write. */
    fprintf(stderr, "eomc: error: %s: %s\n", a.model, err);
    rc = strncmp(err, "the model", 9) == 0 ? EXIT_MODEL : EXIT_RUN;
  } else if (a.depfile) {
    rc = write_depfile(&a, P);
  }
  sym_free(&sys);
  frontend_free(&fe);
  return rc;
}
