/*
** cmd_modes.c — `eomc modes`: find a static equilibrium, linearize there and
** print the natural frequencies and mode shapes (text or JSON).
**
** Newton starts from the model's initial coordinates with --at overrides;
** the inputs are held at their --set constants (default 0) and forces that
** depend on time explicitly are taken at t = 0.  Undamped
** models give K v = omega^2 M v; with damping, the state matrix's
** eigenvalues give natural frequencies and damping ratios (modal.c).
** With --rate, --sweep-rate, or velocity constraints, the analysis is
** about a steady motion instead (modes_steady.c).
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/build_model.h"
#include "cli/cmd.h"
#include "eom/runtime.h"
#include "cli/json_out.h"
#include "cli/modal.h"
#include "cli/modes_steady.h"
#include "cli/no_equilibrium.h"
#include "cli/run_values.h"

static const char modes_usage[] =
  "usage: eomc modes MODEL.eom [OPTIONS]\n"
  "\n"
  "Find a static equilibrium (Newton on the generalized forces at rest),\n"
  "linearize there and print each mode: frequency in rad/s and Hz, period,\n"
  "damping ratio when the model is damped, and the normalized shape.\n"
  "\n"
  "options:\n"
  "  --at NAME=VALUE    starting point of the equilibrium search for a\n"
  "                     coordinate (default: its initial value; repeatable)\n"
  "  --set NAME=VALUE   a parameter or a constant input (repeatable)\n"
  "                     VALUE: numbers, pi and parameters, with an optional unit\n"
  "                     converted to the declared one: 30[deg], 2.5[kN/m], L/2\n"
  "  --json             machine-readable output\n"
  "\n"
  "steady motions (vehicles, spinning wheels; always for a model with velocity\n"
  "constraints):\n"
  "  --rate NAME=VALUE  coordinate NAME turns at the constant rate VALUE and does\n"
  "                     not enter the dynamics (repeatable); the other coordinates\n"
  "                     stand still, positions and rates fixed by constraints\n"
  "                     follow.\n"
  "                     Prints the steady motion and the eigenvalues of the reduced\n"
  "                     system: growth rates (above 0: unstable) and frequencies\n"
  "  --sweep-rate NAME=LO:HI:N\n"
  "                     the same for N rates of NAME from LO to HI: a CSV table of\n"
  "                     the eigenvalues against the rate\n"
  "  --plot FILE.svg    with --sweep-rate: growth rates and frequencies against it\n"
  "\n"
  "exit status: 0 success, 1 model error, 2 usage error,\n"
  "             3 no equilibrium found or the analysis failed\n";

static const double TWO_PI = 6.283185307179586476925286766559;
#ifndef M_PI
#define M_PI 3.14159265358979323846
#endif

static const char *kind_name(ModeKind k) {
  switch (k) {
  case MODE_OSCILLATING: return "oscillating";
  case MODE_NEUTRAL: return "neutral";
  case MODE_UNSTABLE: return "unstable";
  case MODE_DECAYING: return "decaying";
  }
  return "?";
}

/* The real part of the mode's eigenvalue s: > 0 grows as exp(rate t),
** < 0 decays, 0 neither (undamped oscillation, neutral direction). */
static double growth_rate(const Mode *md) {
  switch (md->kind) {
  case MODE_UNSTABLE: return md->rate;
  case MODE_DECAYING: return -md->rate;
  case MODE_OSCILLATING: return -md->zeta * md->omega;
  case MODE_NEUTRAL: return 0;
  }
  return NAN;
}

static void print_json(FILE *f, const struct eom_model *m, const double *q,
                       const struct eom_report *eq, const ModalResult *r) {
  fputs("{\n  \"model\": ", f);
  json_str(f, m->name);
  fputs(",\n  \"equilibrium\": {", f);
  for (int i = 0; i < m->nq; i++) {
    fputs(i ? ", " : "", f);
    json_str(f, m->coord_names[i]);
    fputs(": ", f);
    json_num(f, q[i]);
  }
  fprintf(f, "},\n  \"newton_iterations\": %ld,\n  \"residual\": ", eq->steps);
  json_num(f, eq->residual);
  fprintf(f, ",\n  \"damped\": %s,\n  \"modes\": [", r->damped ? "true" : "false");
  for (int k = 0; k < r->nmodes; k++) {
    const Mode *md = &r->modes[k];
    int osc = md->kind == MODE_OSCILLATING;
    fprintf(f, "%s\n    {\"kind\": \"%s\", \"omega2\": ", k ? "," : "", kind_name(md->kind));
    json_num(f, r->damped ? NAN : md->kind == MODE_NEUTRAL ? 0.0 : md->omega2);
    fputs(", \"omega_rad_s\": ", f);
    json_num(f, osc || (r->damped && md->kind == MODE_UNSTABLE && md->omega_d > 0) ? md->omega : NAN);
    fputs(", \"frequency_hz\": ", f);
    json_num(f, osc ? md->omega / TWO_PI : NAN);
    fputs(", \"period_s\": ", f);
    json_num(f, osc && md->omega_d > 0 ? TWO_PI / md->omega_d : NAN);
    fputs(", \"damping_ratio\": ", f);
    json_num(f, r->damped && md->omega_d > 0 ? md->zeta : (r->damped ? NAN : 0.0));
    fputs(", \"damped_omega_rad_s\": ", f);
    json_num(f, r->damped && md->omega_d > 0 ? md->omega_d : NAN);
    fputs(", \"damped_frequency_hz\": ", f);
    json_num(f, r->damped && md->omega_d > 0 ? md->omega_d / TWO_PI : NAN);
    fputs(", \"growth_rate_per_s\": ", f);
    json_num(f, growth_rate(md));
    fputs(", \"shape\": {", f);
    for (int i = 0; i < m->nq; i++) {
      fputs(i ? ", " : "", f);
      json_str(f, m->coord_names[i]);
      fputs(": ", f);
      json_num(f, md->shape[i]);
    }
    fputs("}", f);
    if (md->phase) {
      fputs(", \"phase_deg\": {", f);
      for (int i = 0; i < m->nq; i++) {
        fputs(i ? ", " : "", f);
        json_str(f, m->coord_names[i]);
        fputs(": ", f);
        json_num(f, md->phase[i]);
      }
      fputs("}", f);
    }
    fputs("}", f);
  }
  fputs("\n  ]\n}\n", f);
}

static void print_shape(FILE *f, const struct eom_model *m, const Mode *md) {
  fputs("    shape:", f);
  for (int i = 0; i < m->nq; i++) {
    fprintf(f, "%s %s = %.6g", i ? "," : "", m->coord_names[i], md->shape[i]);
    if (md->phase && md->shape[i] != 0 && md->phase[i] != 0)
      fprintf(f, " at %.4g deg", md->phase[i]);
  }
  fputc('\n', f);
}

static void print_text(FILE *f, const struct eom_model *m, const double *q,
                       const struct eom_report *eq, const ModalResult *r) {
  fprintf(f, "equilibrium (%ld Newton iterations, residual %.3g):\n", eq->steps, eq->residual);
  for (int i = 0; i < m->nq; i++) fprintf(f, "  %s = %.12g\n", m->coord_names[i], q[i]);
  fprintf(f, "%d mode%s%s:\n", r->nmodes, r->nmodes == 1 ? "" : "s",
          r->damped ? " (damped: from the state matrix)" : "");
  for (int k = 0; k < r->nmodes; k++) {
    const Mode *md = &r->modes[k];
    fprintf(f, "  mode %d: ", k + 1);
    switch (md->kind) {
    case MODE_OSCILLATING:
      if (r->damped)
        fprintf(f,
                "natural %.8g rad/s (%.8g Hz), damping ratio %.6g, damped %.8g rad/s "
                "(%.8g Hz), period %.8g s\n",
                md->omega, md->omega / TWO_PI, md->zeta, md->omega_d, md->omega_d / TWO_PI,
                TWO_PI / md->omega_d);
      else
        fprintf(f, "%.8g rad/s, %.8g Hz, period %.8g s\n", md->omega, md->omega / TWO_PI,
                TWO_PI / md->omega);
      break;
    case MODE_NEUTRAL:
      fputs("neutral (omega^2 = 0: a free direction, no restoring force)\n", f);
      break;
    case MODE_UNSTABLE:
      if (r->damped && md->omega_d > 0)
        fprintf(f, "unstable oscillation, grows as exp(%.6g t) at %.8g rad/s\n", md->rate,
                md->omega_d);
      else if (r->damped)
        fprintf(f, "unstable direction, grows as exp(%.6g t)\n", md->rate);
      else
        fprintf(f, "unstable direction (omega^2 = %.6g), grows as exp(%.6g t)\n", md->omega2,
                md->rate);
      break;
    case MODE_DECAYING:
      fprintf(f, "overdamped, decays as exp(-%.6g t)\n", md->rate);
      break;
    }
    print_shape(f, m, md);
  }
}

/* Why Newton found no equilibrium: the runtime's message, and for models
** without constraints the coordinates whose force cannot vanish (and the
** steady acceleration where there is one). */
static void report_no_equilibrium(const struct eom_model *m, const RunValues *rv,
                                  const struct eom_report *eq) {
  char why[2048];
  if (m->nc > 0 || (eq->status != EOM_ENEWTON && eq->status != EOM_ESINGULAR) ||
      explain_no_equilibrium(m, rv->p, rv->u, rv->x, why, sizeof why) != 0) {
    fprintf(stderr, "eomc modes: error: no static equilibrium: %s\n", eq->message);
    return;
  }
  char *note = strstr(why, "\nnote: ");
  if (note) *note++ = '\0';
  else why[strcspn(why, "\n")] = '\0';
  fprintf(stderr, "eomc modes: error: no static equilibrium: %s\n", why);
  if (note) fprintf(stderr, "eomc modes: %s", note);
}

/* 1 when M and f at rest are the same with coordinate j moved by `by`. */
static int same_dynamics(const struct eom_model *m, const double *p, const double *u,
                         const double *q, int j, double by, double *w) {
  int nq = m->nq;
  size_t nn = (size_t)nq * nq;
  double *qt = w, *qd = qt + nq, *f0 = qd + nq, *f1 = f0 + nq, *M0 = f1 + nq, *M1 = M0 + nn;
  memcpy(qt, q, (size_t)nq * sizeof(double));
  memset(qd, 0, (size_t)nq * sizeof(double));
  m->forcing(0, qt, qd, u, p, f0);
  m->mass(qt, p, M0);
  qt[j] += by;
  m->forcing(0, qt, qd, u, p, f1);
  m->mass(qt, p, M1);
  double fs = 1e-300, ms = 1e-300;
  for (int i = 0; i < nq; i++) fs = fmax(fs, fabs(f0[i]));
  for (size_t i = 0; i < nn; i++) ms = fmax(ms, fabs(M0[i]));
  for (int i = 0; i < nq; i++)
    if (!(fabs(f1[i] - f0[i]) <= 1e-9 * fs + 1e-12)) return 0;
  for (size_t i = 0; i < nn; i++)
    if (!(fabs(M1[i] - M0[i]) <= 1e-9 * ms)) return 0;
  return 1;
}

/* Angles (rad, or no unit) whose dynamics repeat every 2 pi are reported in
** (-pi, pi]: Newton may land several turns away from the start.  The
** period is tested numerically here and at two other points, since the
** descriptor does not say which coordinates are periodic. */
static void wrap_periodic(const struct eom_model *m, const double *p, const double *u,
                          double *q) {
  int nq = m->nq;
  double *w = malloc((5 * (size_t)nq + 2 * (size_t)nq * nq) * sizeof(double));
  double *qs = malloc((size_t)nq * sizeof(double));
  if (!w || !qs) goto out;
  for (int j = 0; j < nq; j++) {
    /* angles: in rad, or without a unit (a model without units) */
    const char *unit = m->coord_units[j];
    if ((unit[0] && strcmp(unit, "rad") != 0) || (q[j] > -M_PI && q[j] <= M_PI)) continue;
    double turns = floor((q[j] + M_PI) / TWO_PI), wrapped = q[j] - turns * TWO_PI;
    if (wrapped <= -M_PI) wrapped += TWO_PI;
    int periodic = 1;
    for (int k = 1; k <= 3 && periodic; k++) {
      for (int i = 0; i < nq; i++) qs[i] = q[i] + 0.3 * k * (i + 1);
      periodic = same_dynamics(m, p, u, qs, j, wrapped - q[j], w);
    }
    if (periodic) q[j] = wrapped;
  }
out:
  free(w);
  free(qs);
}

int cmd_modes(int argc, char **argv) {
  const char *model = NULL;
  char **at = calloc((size_t)argc + 1, sizeof(char *)), **set = calloc((size_t)argc + 1, sizeof(char *));
  int nat = 0, nset = 0, json = 0, rc = 0;
  char **rates = calloc((size_t)argc + 1, sizeof(char *));
  SteadyOptions so = {rates, 0, NULL, NULL, 0};
  char err[1024] = "";
  if (!at || !set || !rates) {
    free(at);
    free(set);
    free(rates);
    fputs("eomc modes: out of memory\n", stderr);
    return EXIT_RUN;
  }
  for (int i = 1; i < argc; i++) {
    const char *arg = argv[i];
    if (cmd_is_help(arg)) {
      fputs(modes_usage, stdout);
      goto done;
    } else if (strcmp(arg, "--json") == 0) {
      json = 1;
    } else if (strcmp(arg, "--at") == 0 || strcmp(arg, "--set") == 0) {
      if (i + 1 >= argc) {
        fprintf(stderr, "eomc modes: option '%s' needs NAME=VALUE (try 'eomc modes --help')\n", arg);
        rc = EXIT_USAGE;
        goto done;
      }
      if (arg[2] == 'a') at[nat++] = argv[++i];
      else set[nset++] = argv[++i];
    } else if (strcmp(arg, "--rate") == 0 || strcmp(arg, "--sweep-rate") == 0 ||
               strcmp(arg, "--plot") == 0) {
      if (i + 1 >= argc) {
        fprintf(stderr, "eomc modes: option '%s' needs a value (try 'eomc modes --help')\n", arg);
        rc = EXIT_USAGE;
        goto done;
      }
      if (arg[2] == 'r') rates[so.nrates++] = argv[++i];
      else if (arg[2] == 's') so.sweep = argv[++i];
      else so.plot = argv[++i];
    } else if (strncmp(arg, "--rate=", 7) == 0) {
      rates[so.nrates++] = (char *)arg + 7;
    } else if (strncmp(arg, "--sweep-rate=", 13) == 0) {
      so.sweep = arg + 13;
    } else if (strncmp(arg, "--plot=", 7) == 0) {
      so.plot = arg + 7;
    } else if (strncmp(arg, "--at=", 5) == 0) {
      at[nat++] = (char *)arg + 5;
    } else if (strncmp(arg, "--set=", 6) == 0) {
      set[nset++] = (char *)arg + 6;
    } else if (arg[0] == '-' && arg[1] != '\0') {
      fprintf(stderr, "eomc modes: unknown option '%s' (try 'eomc modes --help')\n", arg);
      rc = EXIT_USAGE;
      goto done;
    } else if (model) {
      fprintf(stderr, "eomc modes: more than one model file ('%s')\n", arg);
      rc = EXIT_USAGE;
      goto done;
    } else {
      model = arg;
    }
  }
  if (!model) {
    fputs("eomc modes: no model file given (try 'eomc modes --help')\n", stderr);
    rc = EXIT_USAGE;
    goto done;
  }

  BuiltModel bm;
  RunValues rv;
  if ((rc = build_model_without_attitudes(model, "modes", &bm)) != 0) goto done;
  const struct eom_model *m = bm.model;
  ModalResult mr;
  memset(&mr, 0, sizeof mr);
  double *mats = NULL;
  if (run_values_init(&rv, m) != 0) {
    fputs("eomc modes: out of memory\n", stderr);
    rc = EXIT_RUN;
    goto unload;
  }
  for (int i = 0; i < nat; i++)
    if (run_values_assign(&rv, m, at[i], RV_COORDS, err, sizeof err) != 0) {
      fprintf(stderr, "eomc modes: --at %s\n", err);
      rc = EXIT_USAGE;
      goto unload;
    }
  for (int i = 0; i < nset; i++)
    if (run_values_assign(&rv, m, set[i], RV_PARAMS | RV_INPUTS, err, sizeof err) != 0) {
      fprintf(stderr, "eomc modes: --set %s\n", err);
      rc = EXIT_USAGE;
      goto unload;
    }
  if (m->nq == 0) {
    fputs("eomc modes: error: the model has no coordinates\n", stderr);
    rc = EXIT_RUN;
    goto unload;
  }

  if (so.nrates > 0 || so.sweep || so.plot || m->nvc > 0) {
    so.json = json;
    rc = modes_steady(m, &rv, &so);
    goto unload;
  }
  struct eom_report eq, lin;
  double *q = rv.x, *qd = rv.x + m->nq;
  if (eom_equilibrium(m, rv.p, rv.u, 0, q, 0, 0, &eq) != EOM_OK) {
    report_no_equilibrium(m, &rv, &eq);
    rc = EXIT_RUN;
    goto unload;
  }
  size_t nn = (size_t)m->nq * (size_t)m->nq;
  int nr = 0;
  mats = malloc(4 * nn * sizeof(double));
  memset(qd, 0, (size_t)m->nq * sizeof(double));
  if (!mats) {
    fputs("eomc modes: out of memory\n", stderr);
    rc = EXIT_RUN;
    goto unload;
  }
  /* Small motions in tangent coordinates (the model's own without constraints). */
  double *N = mats + 3 * nn;
  if (eom_linearize_tangent(m, rv.p, rv.u, 0, q, N, &nr, mats, mats + nn, mats + 2 * nn, &lin) !=
      EOM_OK) {
    fprintf(stderr, "eomc modes: error: linearization failed: %s\n", lin.message);
    rc = EXIT_RUN;
    goto unload;
  }
  if (lin.message[0]) fprintf(stderr, "eomc modes: %s\n", lin.message);
  if (nr == 0) {
    fputs("eomc modes: error: the constraints leave no freedom to move\n", stderr);
    rc = EXIT_RUN;
    goto unload;
  }
  if (modal_analyze(nr, mats, mats + nn, mats + 2 * nn, &mr, err, sizeof err) != 0 ||
      (m->nc > 0 && modal_expand(&mr, m->nq, N) != 0)) {
    fprintf(stderr, "eomc modes: error: %s\n", m->nc > 0 && !err[0] ? "out of memory" : err);
    rc = EXIT_RUN;
    goto unload;
  }
  wrap_periodic(m, rv.p, rv.u, q);
  /* Print Newton's leftovers (1e-30 where the answer is 0) as 0. */
  double qscale = 0;
  for (int i = 0; i < m->nq; i++) qscale = fmax(qscale, fabs(q[i]));
  for (int i = 0; i < m->nq; i++)
    if (fabs(q[i]) < 1e-14 * fmax(1.0, qscale)) q[i] = 0;
  if (json) print_json(stdout, m, q, &eq, &mr);
  else print_text(stdout, m, q, &eq, &mr);
  if (fflush(stdout) != 0) rc = EXIT_RUN;
unload:
  modal_free(&mr);
  free(mats);
  run_values_free(&rv);
  built_model_close(&bm);
done:
  free(at);
  free(set);
  free(rates);
  return rc;
}
