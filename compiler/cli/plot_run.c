/*
** plot_run.c — the gnuplot script for the plot of a run (plot_run.h).
**
** Panels are grouped by unit, so one y-axis never holds metres and
** radians: the key of a column is its unit (eom_row_unit); a column without
** a unit groups with the others of its kind (outputs, inputs, multipliers,
** coordinates).  A near-constant panel gets a fixed y-range of at least
** PLOT_MIN_SPAN times its magnitude.
*/
#include "cli/plot_run.h"

#include <assert.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/plot.h"
#include "eom/runtime.h"

/* Relative y-span below which a panel's variation is taken for round-off:
** far above double rounding (1e-16) and the noise of a tightly integrated
** run, far below any variation worth seeing on a plot (common practice). */
#define PLOT_MIN_SPAN 1e-6

/* Longest y-axis label before the names are elided (the key lists them
** all): a rotated label longer than its panel would run into the next. */
#define PLOT_LABEL_MAX 32

int plot_min_span(double lo, double hi, double *ylo, double *yhi) {
  if (!(lo <= hi)) return 0; /* no finite value: leave it to gnuplot */
  double mag = fmax(fabs(lo), fabs(hi)), mid = lo / 2 + hi / 2;
  if (mag == 0) {
    *ylo = -1, *yhi = 1;
    return 1;
  }
  double span = PLOT_MIN_SPAN * mag;
  if (hi - lo >= span) return 0;
  *ylo = mid - span / 2, *yhi = mid + span / 2;
  return 1;
}

/* The kind of row column k (eom_row_column's order), for grouping the
** columns without a unit. */
static const char *column_kind(const struct eom_model *m, int k) {
  int natt = m->nattitudes > 0 ? m->nattitudes : 0, width = eom_row_width(m);
  int angles = 1 + eom_state_size(m), outputs = angles + 3 * natt;
  int inputs = outputs + m->ny, multipliers = inputs + m->nu;
  if (k == 0) return "t";
  if (k <= m->nq) return "coordinates";
  if (k < angles) return "rates";
  if (k < outputs) return "attitude angles";
  if (k < inputs) return "outputs";
  if (k < multipliers) return "inputs";
  if (k < width - 2) return "multipliers";
  return "energies";
}

/* Coordinates before the attitudes' quaternions: those with a rate of
** their own.  A quaternion is plotted as its roll, pitch and yaw. */
static int plain_coords(const struct eom_model *m) {
  return m->nq - 4 * (m->nattitudes > 0 ? m->nattitudes : 0);
}

typedef struct Panel {
  char key[128];   /* the unit, or "(KIND)" for columns without one */
  char unit[96];
  int *members;    /* CSV column indices */
  int n;
  double lo, hi;
} Panel;

typedef struct Layout {
  Panel *panels;
  int npanels;
  int tcol;        /* CSV index of t */
  int *phase_q, *phase_qd, nphase;  /* CSV indices of (q, q') pairs */
} Layout;

static void layout_free(Layout *L) {
  for (int i = 0; i < L->npanels; i++) free(L->panels[i].members);
  free(L->panels);
  free(L->phase_q);
  free(L->phase_qd);
}

static int find_csv_col(const PlotRun *r, int k) {
  for (int i = 0; i < r->ncols; i++)
    if (r->cols[i] == k) return i;
  return -1;
}

/* Group the columns into panels in the order they first appear. */
static int layout_build(const PlotRun *r, Layout *L) {
  const struct eom_model *m = r->m;
  memset(L, 0, sizeof *L);
  L->tcol = find_csv_col(r, 0);
  L->panels = calloc((size_t)r->ncols + 1, sizeof(Panel));
  L->phase_q = calloc((size_t)m->nq + 1, sizeof(int));
  L->phase_qd = calloc((size_t)m->nq + 1, sizeof(int));
  assert(plain_coords(m) >= 0);
  if (!L->panels || !L->phase_q || !L->phase_qd) return -1;
  for (int i = 0; i < r->ncols; i++) {
    int k = r->cols[i];
    char unit[96], key[128];
    if (k == 0 || (k <= m->nq && k - 1 >= plain_coords(m))) continue;
    eom_row_unit(m, k, unit, sizeof unit);
    if (unit[0]) snprintf(key, sizeof key, "%s", unit);
    else snprintf(key, sizeof key, "(%s)", column_kind(m, k));
    Panel *p = NULL;
    for (int j = 0; j < L->npanels; j++)
      if (strcmp(L->panels[j].key, key) == 0) p = &L->panels[j];
    if (!p) {
      p = &L->panels[L->npanels++];
      snprintf(p->key, sizeof p->key, "%s", key);
      snprintf(p->unit, sizeof p->unit, "%s", unit);
      p->members = calloc((size_t)r->ncols, sizeof(int));
      if (!p->members) return -1;
      p->lo = INFINITY, p->hi = -INFINITY;
    }
    p->members[p->n++] = i;
    if (r->lo && r->lo[i] <= r->hi[i]) p->lo = fmin(p->lo, r->lo[i]), p->hi = fmax(p->hi, r->hi[i]);
  }
  for (int q = 0; q < plain_coords(m); q++) {
    int a = find_csv_col(r, 1 + q), b = find_csv_col(r, 1 + m->nq + q);
    if (a >= 0 && b >= 0) L->phase_q[L->nphase] = a, L->phase_qd[L->nphase++] = b;
  }
  return 0;
}

/* "q1, q2 [rad]": the panel's names and unit, elided when long. */
static void panel_label(const PlotRun *r, const Panel *p, char *buf, size_t cap) {
  char name[256];
  size_t len = 0;
  buf[0] = '\0';
  for (int i = 0; i < p->n; i++) {
    eom_row_column(r->m, r->cols[p->members[i]], name, sizeof name, NULL);
    if (i > 0 && len + strlen(name) + strlen(p->unit) + 5 > PLOT_LABEL_MAX) {
      len += (size_t)snprintf(buf + len, cap - len, ", ...");
      break;
    }
    len += (size_t)snprintf(buf + len, cap - len, "%s%s", i ? ", " : "", name);
    if (len >= cap) break;
  }
  if (p->unit[0] && len < cap) snprintf(buf + len, cap - len, " [%s]", p->unit);
}

static void write_panel(FILE *f, const PlotRun *r, const Layout *L, const Panel *p,
                        const char *csv) {
  char label[PLOT_LABEL_MAX + 128], name[256];
  double ylo, yhi;
  int col_T = -1, col_V = -1, width = eom_row_width(r->m);
  panel_label(r, p, label, sizeof label);
  fputs("set xlabel 't [s]'\nset ylabel ", f);
  plot_quoted(f, label);
  fputc('\n', f);
  if (plot_min_span(p->lo, p->hi, &ylo, &yhi)) fprintf(f, "set yrange [%.17g:%.17g]\n", ylo, yhi);
  else fputs("set autoscale y\n", f);
  fputs("plot ", f);
  for (int i = 0; i < p->n; i++) {
    int c = p->members[i], k = r->cols[c];
    if (k == width - 2) col_T = c;
    if (k == width - 1) col_V = c;
    fputs(i ? ", '' " : "", f);
    if (!i) plot_quoted(f, csv);
    fprintf(f, " using %d:%d with lines title ", L->tcol + 1, c + 1);
    plot_quoted(f, eom_row_column(r->m, k, name, sizeof name, NULL));
  }
  if (col_T >= 0 && col_V >= 0)
    fprintf(f, ", '' using %d:(column(%d) + column(%d)) with lines title 'T + V'", L->tcol + 1,
            col_T + 1, col_V + 1);
  fputc('\n', f);
}

static void write_phase(FILE *f, const PlotRun *r, int qcol, int qdcol, const char *csv) {
  char name[256], buf[400], unit[96];
  const struct eom_model *m = r->m;
  int k = r->cols[qcol];
  eom_row_column(m, k, name, sizeof name, NULL);
  snprintf(buf, sizeof buf, "phase portrait: %s", name);
  fputs("set title ", f);
  plot_quoted(f, buf);
  eom_row_unit(m, k, unit, sizeof unit);
  snprintf(buf, sizeof buf, unit[0] ? "%s [%s]" : "%s", name, unit);
  fputs("\nset xlabel ", f);
  plot_quoted(f, buf);
  eom_row_unit(m, r->cols[qdcol], unit, sizeof unit);
  snprintf(buf, sizeof buf, "%s' [%s]", name, unit);
  fputs("\nset ylabel ", f);
  plot_quoted(f, buf);
  fputs("\nset autoscale y\nplot ", f);
  plot_quoted(f, csv);
  fprintf(f, " using %d:%d with lines notitle\n", qcol + 1, qdcol + 1);
}

static int write_run_script(FILE *f, const void *ctx, const char *csv, const char *out) {
  const PlotRun *r = ctx;
  Layout L;
  if (layout_build(r, &L) != 0) {
    layout_free(&L);
    return -1;
  }
  int panels = L.npanels + L.nphase;
  plot_terminal(f, out, 900, 60 + 250 * (panels > 0 ? panels : 1));
  fputs("set datafile separator ','\nset grid\nset key outside right top\n", f);
  fprintf(f, "set multiplot layout %d,1 title ", panels > 0 ? panels : 1);
  plot_quoted(f, r->m->name);
  fputc('\n', f);
  for (int i = 0; i < L.npanels; i++) {
    char title[128] = "";
    if (L.panels[i].key[0] == '(') /* no unit: the kind, "outputs" */
      snprintf(title, sizeof title, "%.*s", (int)strlen(L.panels[i].key) - 2, L.panels[i].key + 1);
    fputs("set title ", f);
    plot_quoted(f, title);
    fputc('\n', f);
    write_panel(f, r, &L, &L.panels[i], csv);
  }
  for (int i = 0; i < L.nphase; i++) write_phase(f, r, L.phase_q[i], L.phase_qd[i], csv);
  fputs("unset multiplot\nset output\n", f);
  layout_free(&L);
  return ferror(f) ? -1 : 0;
}

int plot_run(const PlotRun *r, const char *csv_path, const char *out_path, char *err,
             size_t errlen) {
  assert(r && r->m && r->cols && r->ncols > 0);
  if (find_csv_col(r, 0) < 0) {
    snprintf(err, errlen, "--plot needs the column t among those written");
    return -1;
  }
  if (r->ncols < 2) {
    snprintf(err, errlen, "--plot: no column to plot besides t");
    return -1;
  }
  return plot_render(write_run_script, r, csv_path, out_path, err, errlen);
}
