/*
** modes_steady.c — `eomc modes --rate NAME=VALUE` and `--sweep-rate`:
** eigenvalues of the reduced system about a steady motion (steady.c; with
** position constraints too, in the coordinates they leave free), as
** text, JSON, or a table over a range of one rate (with an SVG of growth
** rates and frequencies against it).
*/
#include "cli/modes_steady.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli/cmd.h"
#include "cli/json_out.h"
#include "cli/plot.h"
#include "cli/tmpfiles.h"
#include "cli/steady.h"
#include "cli/value_text.h"

static const double TWO_PI = 6.283185307179586476925286766559;

static int coord_index(const struct eom_model *m, const char *name, size_t len) {
  for (int i = 0; i < m->nq; i++)
    if (strlen(m->coord_names[i]) == len && strncmp(m->coord_names[i], name, len) == 0) return i;
  return -1;
}

/* The unit a rate of coordinate i is written in ("" when none). */
static const char *rate_unit(const struct eom_model *m, int i, char *buf, size_t size) {
  buf[0] = '\0';
  if (m->coord_units && m->coord_units[i][0]) snprintf(buf, size, "(%s)/s", m->coord_units[i]);
  return buf;
}

/* "NAME=VALUE" (NAME or NAME'; VALUE as for --set, cli/value_text.h): the
** coordinate and the rate; -1 and a message. */
static int parse_rate(const struct eom_model *m, const double *p, const char *arg, int *index,
                      double *value, char *err, size_t errlen) {
  const char *eq = strchr(arg, '=');
  size_t len = eq ? (size_t)(eq - arg) : 0;
  if (len > 0 && arg[len - 1] == '\'') len--;
  if (!eq || len == 0) {
    snprintf(err, errlen, "'%s' is not NAME=VALUE", arg);
    return -1;
  }
  *index = coord_index(m, arg, len);
  if (*index < 0) {
    snprintf(err, errlen, "'%.*s' is not a coordinate of the model", (int)len, arg);
    return -1;
  }
  char unit[256];
  return value_text_eval(arg, eq + 1, m, p, rate_unit(m, *index, unit, sizeof unit), value, err,
                         errlen);
}

/* "NAME=LO:HI:N" */
static int parse_sweep(const struct eom_model *m, const double *p, const char *arg, int *index,
                       double *lo, double *hi, int *n, char *err, size_t errlen) {
  char buf[512], unit[256];
  snprintf(buf, sizeof buf, "%s", arg);
  char *eq = strchr(buf, '='), *c1 = eq ? strchr(eq, ':') : NULL, *c2 = c1 ? strchr(c1 + 1, ':') : NULL;
  if (!c2) {
    snprintf(err, errlen, "--sweep-rate wants NAME=LO:HI:N, not '%s'", arg);
    return -1;
  }
  *c1 = *c2 = '\0';
  double count;
  if (parse_rate(m, p, buf, index, lo, err, errlen) != 0) return -1;
  if (value_text_eval(c1 + 1, c1 + 1, m, p, rate_unit(m, *index, unit, sizeof unit), hi, err,
                      errlen) != 0)
    return -1;
  if (parse_number(c2 + 1, &count) != 0 || count < 2 || count > 100000 || count != floor(count)) {
    snprintf(err, errlen, "--sweep-rate wants NAME=LO:HI:N with N a whole number >= 2, not '%s'",
             arg);
    return -1;
  }
  *n = (int)count;
  return 0;
}

static void print_motion(FILE *f, const struct eom_model *m, const SteadyMotion *sm) {
  fprintf(f, "steady motion (%d iterations, residual %.3g):\n", sm->iterations, sm->residual);
  for (int i = 0; i < m->nq; i++) {
    int role = sm->role[i];
    const char *name = m->coord_names[i];
    if (role & STEADY_KEPT)
      fprintf(f, "  %s = %.10g (at rest)\n", name, sm->q[i]);
    else if (role & STEADY_POS_DEP)
      fprintf(f, "  %s = %.10g, %s' = %.10g (follow from the position constraints)\n", name,
              sm->q[i], name, sm->v[i]);
    else if (role & STEADY_GIVEN)
      fprintf(f, "  %s' = %.10g (given; %s left out: it does not enter the dynamics)\n", name,
              sm->v[i], name);
    else
      fprintf(f, "  %s' = %.10g (%s; %s left out: it does not enter the dynamics)\n", name,
              sm->v[i], (role & STEADY_DEPENDENT) ? "fixed by the velocity constraints" : "steady",
              name);
  }
  fputs("reduced state:", f);
  for (int k = 0; k < sm->nk; k++) fprintf(f, " %s", m->coord_names[sm->kept[k]]);
  for (int k = 0; k < sm->ni; k++) fprintf(f, " %s'", m->coord_names[sm->independent[k]]);
  fputc('\n', f);
}

static void print_eigenvalues(FILE *f, const SteadyMotion *sm) {
  int nz = sm->nk + sm->ni;
  fprintf(f, "eigenvalues (%d): %s, largest growth rate %.6g 1/s\n", nz,
          sm->unstable ? "unstable" : "stable (no eigenvalue grows)", sm->max_growth);
  for (int k = 0; k < nz; k++) {
    double re = sm->re[k], im = sm->im[k];
    fprintf(f, "  s%d = %.8g %c %.8gi:  growth rate %.6g 1/s", k + 1, re, im < 0 ? '-' : '+',
            fabs(im), re);
    if (im != 0) fprintf(f, ", frequency %.8g rad/s (%.6g Hz)", fabs(im), fabs(im) / TWO_PI);
    fputc('\n', f);
  }
}

static void print_json(FILE *f, const struct eom_model *m, const SteadyMotion *sm) {
  fprintf(f, "{\n  \"model\": \"%s\",\n  \"steady_motion\": {", m->name);
  for (int i = 0; i < m->nq; i++) {
    fprintf(f, "%s\"%s\": ", i ? ", " : "", m->coord_names[i]);
    json_num(f, sm->q[i]);
    fprintf(f, ", \"%s'\": ", m->coord_names[i]);
    json_num(f, sm->v[i]);
  }
  fputs("},\n  \"reduced_state\": [", f);
  for (int k = 0; k < sm->nk; k++) fprintf(f, "%s\"%s\"", k ? ", " : "", m->coord_names[sm->kept[k]]);
  for (int k = 0; k < sm->ni; k++)
    fprintf(f, "%s\"%s'\"", sm->nk + k ? ", " : "", m->coord_names[sm->independent[k]]);
  fprintf(f, "],\n  \"stable\": %s,\n  \"max_growth_rate\": ", sm->unstable ? "false" : "true");
  json_num(f, sm->max_growth);
  fputs(",\n  \"eigenvalues\": [", f);
  for (int k = 0; k < sm->nk + sm->ni; k++) {
    fprintf(f, "%s\n    {\"re\": ", k ? "," : "");
    json_num(f, sm->re[k]);
    fputs(", \"im\": ", f);
    json_num(f, sm->im[k]);
    fputs("}", f);
  }
  fputs("\n  ]\n}\n", f);
}

/* One table row per value of the swept rate, warm-started from the last. */
static int sweep(const struct eom_model *m, RunValues *rv, int *given, double *rate,
                 const SteadyOptions *o) {
  char err[1024];
  int idx, n;
  double lo, hi;
  if (parse_sweep(m, rv->p, o->sweep, &idx, &lo, &hi, &n, err, sizeof err) != 0) {
    fprintf(stderr, "eomc modes: %s\n", err);
    return EXIT_USAGE;
  }
  given[idx] = 1;
  char *tmp = NULL;
  FILE *out = stdout;
  int fd = -1, rc = 0, neig = 0;
  if (o->plot) {
    fd = tmpfiles_create("eomc-sweep", &tmp);
    out = fd >= 0 ? fdopen(fd, "w") : NULL;
    if (!out) {
      fprintf(stderr, "eomc modes: cannot create a temporary file in %s\n", tmpfiles_dir());
      if (fd >= 0) close(fd), unlink(tmp);
      free(tmp);
      return EXIT_RUN;
    }
  }
  SteadyMotion sm;
  memset(&sm, 0, sizeof sm);
  for (int k = 0; k < n && rc == 0; k++) {
    rate[idx] = lo + (hi - lo) * k / (n - 1);
    if (steady_analyze(m, rv->p, rv->u, rv->x, rv->x + m->nq, given, rate, NULL, k > 0, &sm, err,
                       sizeof err) != 0) {
      fprintf(stderr, "eomc modes: error: at %s' = %.10g: %s\n", m->coord_names[idx], rate[idx],
              err);
      rc = EXIT_RUN;
      break;
    }
    int nz = sm.nk + sm.ni;
    if (k == 0) {
      neig = nz;
      fprintf(out, "%s',max_growth,stable", m->coord_names[idx]);
      for (int j = 0; j < nz; j++) fprintf(out, ",re%d,im%d", j + 1, j + 1);
      fputc('\n', out);
    }
    fprintf(out, "%.10g,%.10g,%d", rate[idx], sm.max_growth, !sm.unstable);
    for (int j = 0; j < nz; j++) fprintf(out, ",%.10g,%.10g", sm.re[j], sm.im[j]);
    fputc('\n', out);
  }
  steady_free(&sm);
  if (o->plot) {
    if (fclose(out) != 0 && rc == 0) rc = EXIT_RUN;
    if (rc == 0) {
      if (plot_sweep_svg(m->coord_names[idx], neig, tmp, o->plot, err, sizeof err) != 0) {
        fprintf(stderr, "eomc modes: --plot: %s\n", err);
        rc = EXIT_RUN;
      } else {  /* the table goes to stdout as well */
        FILE *in = fopen(tmp, "r");
        if (in) {
          char line[4096];
          while (fgets(line, sizeof line, in)) fputs(line, stdout);
          fclose(in);
        }
      }
    }
    unlink(tmp);
    free(tmp);
  }
  return rc;
}

int modes_steady(const struct eom_model *m, RunValues *rv, const SteadyOptions *o) {
  char err[1024];
  int *given = calloc((size_t)m->nq + 1, sizeof(int));
  double *rate = calloc((size_t)m->nq + 1, sizeof(double));
  int rc = 0;
  if (!given || !rate) {
    fputs("eomc modes: out of memory\n", stderr);
    rc = EXIT_RUN;
    goto out;
  }
  for (int k = 0; k < o->nrates; k++) {
    int idx;
    double v;
    if (parse_rate(m, rv->p, o->rates[k], &idx, &v, err, sizeof err) != 0) {
      fprintf(stderr, "eomc modes: --rate %s\n", err);
      rc = EXIT_USAGE;
      goto out;
    }
    given[idx] = 1;
    rate[idx] = v;
  }
  if (o->plot && !o->sweep) {
    fputs("eomc modes: --plot needs --sweep-rate (a picture of eigenvalues against speed)\n",
          stderr);
    rc = EXIT_USAGE;
    goto out;
  }
  if (o->sweep) {
    rc = sweep(m, rv, given, rate, o);
    goto out;
  }
  SteadyMotion sm;
  memset(&sm, 0, sizeof sm);
  if (steady_analyze(m, rv->p, rv->u, rv->x, rv->x + m->nq, given, rate, NULL, 0, &sm, err,
                     sizeof err) != 0) {
    fprintf(stderr, "eomc modes: error: %s\n", err);
    rc = EXIT_RUN;
  } else if (o->json) {
    print_json(stdout, m, &sm);
  } else {
    print_motion(stdout, m, &sm);
    print_eigenvalues(stdout, &sm);
  }
  steady_free(&sm);
  if (fflush(stdout) != 0) rc = EXIT_RUN;
out:
  free(given);
  free(rate);
  return rc;
}
