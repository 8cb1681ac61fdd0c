/*
** linearize_print.c — `eomc linearize`'s output: the point, what the
** reduction made of the coordinates, and A, B, C, D with row and column
** labels, as text or as JSON (numbers with 17 significant digits).
*/
#include "cli/linearize_print.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli/json_out.h"
#include "eom/runtime.h"

/* Print an r x c matrix with labels, in columns wide enough for both. */
static void print_matrix(FILE *f, const char *title, const double *a, int r, int c,
                         const char *const *rows, const char *const *cols) {
  int lw = 1, cw = 12;
  fprintf(f, "\n%s:\n", title);
  if (r == 0 || c == 0) {
    fprintf(f, "  (empty: %d x %d)\n", r, c);
    return;
  }
  for (int i = 0; i < r; i++)
    if ((int)strlen(rows[i]) > lw) lw = (int)strlen(rows[i]);
  for (int j = 0; j < c; j++)
    if ((int)strlen(cols[j]) + 1 > cw) cw = (int)strlen(cols[j]) + 1;
  fprintf(f, "  %*s", lw, "");
  for (int j = 0; j < c; j++) fprintf(f, " %*s", cw, cols[j]);
  fputc('\n', f);
  for (int i = 0; i < r; i++) {
    fprintf(f, "  %-*s", lw, rows[i]);
    for (int j = 0; j < c; j++) {
      double v = a[(size_t)i * c + j];
      fprintf(f, " %*.*g", cw, 6, v == 0 ? 0.0 : v);  /* no -0 */
    }
    fputc('\n', f);
  }
}

static void json_names(FILE *f, const char *key, const char *const *names, int n) {
  fprintf(f, ",\n  \"%s\": [", key);
  for (int i = 0; i < n; i++) {
    fputs(i ? ", " : "", f);
    json_str(f, names[i]);
  }
  fputc(']', f);
}

static void json_matrix(FILE *f, const char *key, const double *a, int r, int c) {
  fprintf(f, ",\n  \"%s\": [", key);
  for (int i = 0; i < r; i++) {
    fputs(i ? ",\n    [" : "\n    [", f);
    for (int j = 0; j < c; j++) {
      fputs(j ? ", " : "", f);
      json_num_exact(f, a[(size_t)i * c + j] == 0 ? 0.0 : a[(size_t)i * c + j]);
    }
    fputc(']', f);
  }
  fputs(r ? "\n  ]" : "]", f);
}

static const char *const point_kinds[] = {"the given point", "an equilibrium",
                                          "a steady motion"};

/* The name of entry i of the full state (the point): the linear model's
** state names without attitudes; else coordinates with quaternion entries
** (R.w ...) and the velocities (omega(R)[1] ...). */
static const char *point_name(const struct eom_model *m, const char *const *xs, int i, char *buf,
                              size_t size) {
  if (m->nattitudes == 0) return xs[i];
  if (i < m->nq) snprintf(buf, size, "%s", m->coord_names[i]);
  else snprintf(buf, size, "%s", m->rate_names[i - m->nq]);
  return buf;
}

void linearize_print_json(FILE *f, const struct eom_model *m, const Point *pt, const Linear *L,
                       const char *const *xs, const char *const *zs) {
  fputs("{\n  \"model\": ", f);
  json_str(f, m->name);
  fprintf(f, ",\n  \"equilibrium\": %s", pt->kind == POINT_EQUILIBRIUM ? "true" : "false");
  if (pt->kind == POINT_STEADY) fputs(",\n  \"steady_motion\": true", f);
  if (pt->kind != POINT_GIVEN) {
    fprintf(f, ",\n  \"%s\": %ld,\n  \"residual\": ",
            pt->kind == POINT_STEADY ? "iterations" : "newton_iterations", pt->steps);
    json_num(f, pt->residual);
  }
  fputs(",\n  \"point\": {", f);
  char pname[256];
  for (int i = 0; i < eom_state_size(m); i++) {
    fputs(i ? ", " : "", f);
    json_str(f, point_name(m, xs, i, pname, sizeof pname));
    fputs(": ", f);
    json_num_exact(f, pt->x[i]);
  }
  fputs("},\n  \"inputs_at\": {", f);
  for (int i = 0; i < L->nu; i++) {
    fputs(i ? ", " : "", f);
    json_str(f, m->input_names[i]);
    fputs(": ", f);
    json_num_exact(f, pt->u[i]);
  }
  fputc('}', f);
  if (pt->red) {
    const Reduction *r = pt->red;
    const char *heads[3] = {"dependent", "given_rates", "left_out"};
    int flags[3] = {REDUCE_POS_DEP | REDUCE_RATE_DEP, REDUCE_GIVEN, REDUCE_ABSENT};
    fputs(",\n  \"reduced\": true", f);
    for (int h = 0; h < 3; h++) {
      fprintf(f, ",\n  \"%s\": [", heads[h]);
      for (int i = 0, n = 0; i < m->nq; i++)
        if ((r->role[i] & flags[h]) &&
            !(h == 2 && (r->role[i] & (REDUCE_GIVEN | REDUCE_POS_DEP)))) {
          fputs(n++ ? ", " : "", f);
          /* dependent rates only: "NAME'"; dependent positions: "NAME" */
          char name[256];
          snprintf(name, sizeof name, "%s%s", m->coord_names[i],
                   h == 0 && !(r->role[i] & REDUCE_POS_DEP) ? "'" : "");
          json_str(f, name);
        }
      fputc(']', f);
    }
  }
  json_names(f, "state", zs, L->n);
  json_names(f, "inputs", m->input_names, L->nu);
  json_names(f, "outputs", m->output_names, L->ny);
  json_matrix(f, "A", L->A, L->n, L->n);
  json_matrix(f, "B", L->B, L->n, L->nu);
  json_matrix(f, "C", L->C, L->ny, L->n);
  json_matrix(f, "D", L->D, L->ny, L->nu);
  fputs("\n}\n", f);
}

/* What the reduction made of the coordinates, in words. */
static void print_reduction(FILE *f, const struct eom_model *m, const Reduction *r) {
  static const struct { int flag, not; const char *text; } kinds[] = {
    {REDUCE_POS_DEP, 0, "follow from the position constraints (with their rates)"},
    {REDUCE_RATE_DEP, REDUCE_POS_DEP, "rates follow from the velocity constraints"},
    {REDUCE_GIVEN, 0, "turn at the given rates (left out)"},
    {REDUCE_ABSENT, REDUCE_GIVEN | REDUCE_POS_DEP, "enter nothing (left out)"},
  };
  fputs("reduced state: the independent positions and rates only\n", f);
  for (size_t k = 0; k < sizeof kinds / sizeof kinds[0]; k++) {
    int any = 0;
    for (int i = 0; i < m->nq; i++)
      if ((r->role[i] & kinds[k].flag) && !(r->role[i] & kinds[k].not))
        fprintf(f, "%s%s", any++ ? ", " : "  ", m->coord_names[i]);
    if (any) fprintf(f, ": %s\n", kinds[k].text);
  }
}

void linearize_print_text(FILE *f, const struct eom_model *m, const Point *pt, const Linear *L,
                       const char *const *xs, const char *const *zs) {
  if (pt->kind == POINT_GIVEN)
    fprintf(f, "%s linearized at the given point:\n", m->name);
  else
    fprintf(f, "%s linearized at %s (%ld %s iterations, residual %.3g):\n", m->name,
            point_kinds[pt->kind], pt->steps,
            pt->kind == POINT_STEADY ? "Levenberg-Marquardt" : "Newton", pt->residual);
  char pname[256];
  for (int i = 0; i < eom_state_size(m); i++)
    fprintf(f, "  %s = %.12g\n", point_name(m, xs, i, pname, sizeof pname), pt->x[i]);
  for (int i = 0; i < L->nu; i++) fprintf(f, "  input %s = %.12g\n", m->input_names[i], pt->u[i]);
  if (pt->red) {
    print_reduction(f, m, pt->red);
    fprintf(f, "x' = A x + B u, y = C x + D u (deviations from the point); x the reduced "
               "state (%d), u (%d), y (%d)\n", L->n, L->nu, L->ny);
  } else {
    fprintf(f, "x' = A x + B u, y = C x + D u (deviations from the point); x = [q; q'] (%d), "
               "u (%d), y (%d)\n", L->n, L->nu, L->ny);
    if (m->nattitudes > 0)
      fprintf(f, "(with attitudes: each quaternion's deviation is a small rotation R.dth1..3 "
                 "about\n the body axes, and the rates are the velocities, omega(R) for an "
                 "attitude)\n");
  }
  print_matrix(f, "A", L->A, L->n, L->n, zs, zs);
  print_matrix(f, "B", L->B, L->n, L->nu, zs, m->input_names);
  print_matrix(f, "C", L->C, L->ny, L->n, m->output_names, zs);
  print_matrix(f, "D", L->D, L->ny, L->nu, m->output_names, m->input_names);
}

