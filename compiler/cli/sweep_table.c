/*
** sweep_table.c — rows, summary, traces and MPI records of `eomc sweep`
** (see sweep_table.h).  Numbers are written as the shortest text that
** reads back exactly (eom_format_double), so a row depends only on the
** run's values and never on how the sweep was split.
*/
#include "cli/sweep_table.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#define MESSAGE_BYTES 512

static void put_number(FILE *f, double v) {
  char buf[EOM_NUMBER_MAX];
  eom_format_double(buf, v);
  fputc(',', f);
  fputs(buf, f);
}

/* A CSV field, quoted (RFC 4180) when it holds a comma, quote or newline. */
static void put_field(FILE *f, const char *s) {
  fputc(',', f);
  if (!strpbrk(s, ",\"\r\n")) {
    fputs(s, f);
    return;
  }
  fputc('"', f);
  for (; *s; s++) {
    if (*s == '"') fputc('"', f);
    fputc(*s == '\n' || *s == '\r' ? ' ' : *s, f);
  }
  fputc('"', f);
}

int sweep_table_init(SweepTable *t, const struct eom_model *m, int nvars,
                     const char *const *var_names, FILE *out, int trace_points) {
  memset(t, 0, sizeof *t);
  t->m = m, t->nvars = nvars, t->var_names = var_names, t->out = out;
  t->first_failed = -1;
  t->trace_points = trace_points > 1 ? trace_points : 0;
  t->stats = calloc(2 * (size_t)m->nq + (size_t)m->ny + 1, sizeof(SweepStat));
  return t->stats ? 0 : -1;
}

void sweep_table_free(SweepTable *t) {
  free(t->stats);
  free(t->traces);
  memset(t, 0, sizeof *t);
}

void sweep_table_header(SweepTable *t) {
  const struct eom_model *m = t->m;
  FILE *f = t->out;
  fputs("run", f);
  for (int k = 0; k < t->nvars; k++) fprintf(f, ",%s", t->var_names[k]);
  for (int i = 0; i < m->nq; i++) fprintf(f, ",final(%s)", m->coord_names[i]);
  for (int i = 0; i < m->nq; i++) fprintf(f, ",final(%s')", m->coord_names[i]);
  for (int i = 0; i < m->ny; i++) fprintf(f, ",final(%s)", m->output_names[i]);
  fputs(",t", f);
  for (int i = 0; i < m->nq; i++) fprintf(f, ",min(%s),max(%s)", m->coord_names[i], m->coord_names[i]);
  for (int i = 0; i < m->ny; i++)
    fprintf(f, ",min(%s),max(%s)", m->output_names[i], m->output_names[i]);
  fputs(",dE,events,status\n", f);
  if (ferror(f)) t->write_failed = 1;
}

/* Fold one run's final value v and its extremes (lo, hi) into s. */
static void stat_add(SweepStat *s, long run, double v, double lo, double hi) {
  if (!isfinite(v)) return;
  s->n++;
  double d = v - s->mean;
  s->mean += d / (double)s->n;
  s->m2 += d * (v - s->mean);
  if (s->n == 1 || v < s->lo) s->lo = v, s->lo_run = run;
  if (s->n == 1 || v > s->hi) s->hi = v, s->hi_run = run;
  if (s->n == 1 || lo < s->env_lo) s->env_lo = lo, s->env_lo_run = run;
  if (s->n == 1 || hi > s->env_hi) s->env_hi = hi, s->env_hi_run = run;
}

static void keep_trace(SweepTable *t, const struct eom_sweep_run *r) {
  size_t width = (size_t)t->trace_points * (size_t)(t->m->nq + t->m->ny);
  if (!t->trace_points || !r->trace || t->write_failed) return;
  if ((size_t)t->rows >= t->traces_cap) {
    size_t cap = t->traces_cap ? 2 * t->traces_cap : 64;
    double *grown = realloc(t->traces, cap * width * sizeof(double));
    if (!grown) {
      t->write_failed = 1; /* reported as a failure of the output */
      return;
    }
    t->traces = grown, t->traces_cap = cap;
  }
  memcpy(t->traces + (size_t)t->rows * width, r->trace, width * sizeof(double));
}

void sweep_table_add(SweepTable *t, const struct eom_sweep_run *r) {
  const struct eom_model *m = t->m;
  FILE *f = t->out;
  int nq = m->nq, ny = m->ny;
  assert(r->run >= 0);
  fprintf(f, "%ld", r->run);
  for (int k = 0; k < t->nvars; k++) put_number(f, r->values[k]);
  for (int i = 0; i < 2 * nq; i++) put_number(f, r->x[i]);
  for (int i = 0; i < ny; i++) put_number(f, r->y[i]);
  put_number(f, r->t);
  for (int i = 0; i < nq; i++) put_number(f, r->qmin[i]), put_number(f, r->qmax[i]);
  for (int i = 0; i < ny; i++) put_number(f, r->ymin[i]), put_number(f, r->ymax[i]);
  put_number(f, r->energy_change);
  fprintf(f, ",%ld", r->events);
  if (r->status == EOM_OK) {
    fputs(",ok\n", f);
    for (int i = 0; i < nq; i++) {
      stat_add(&t->stats[i], r->run, r->x[i], r->qmin[i], r->qmax[i]);
      stat_add(&t->stats[nq + i], r->run, r->x[nq + i], r->x[nq + i], r->x[nq + i]);
    }
    for (int i = 0; i < ny; i++) {
      stat_add(&t->stats[2 * nq + i], r->run, r->y[i], r->ymin[i], r->ymax[i]);
    }
    stat_add(&t->stats[2 * nq + ny], r->run, r->energy_change, r->energy_change,
             r->energy_change);
  } else {
    char buf[MESSAGE_BYTES + 32];
    snprintf(buf, sizeof buf, "failed: %s", r->message);
    put_field(f, buf);
    fputc('\n', f);
    if (t->failed++ == 0) t->first_failed = r->run;
  }
  if (ferror(f)) t->write_failed = 1;
  keep_trace(t, r);
  t->rows++;
}

/* The name of statistic i: a coordinate, a rate, an output or dE. */
static void stat_name(const struct eom_model *m, int i, char *buf, size_t cap) {
  int nq = m->nq, ny = m->ny;
  if (i < nq) snprintf(buf, cap, "%s", m->coord_names[i]);
  else if (i < 2 * nq) snprintf(buf, cap, "%s'", m->coord_names[i - nq]);
  else if (i < 2 * nq + ny) snprintf(buf, cap, "%s", m->output_names[i - 2 * nq]);
  else snprintf(buf, cap, "dE");
}

void sweep_table_summary(const SweepTable *t, FILE *f) {
  const struct eom_model *m = t->m;
  int n = 2 * m->nq + m->ny + 1;
  long ok = t->rows - t->failed;
  fprintf(f, "%ld runs, %ld ok, %ld failed", t->rows, ok, t->failed);
  if (t->failed) fprintf(f, " (the first: run %ld)", t->first_failed);
  fputs("\n", f);
  if (ok == 0) return;
  fprintf(f, "over the %ld runs that finished: the final value's mean, standard deviation,\n"
             "min and max (with their runs); lowest min and highest max during the runs\n", ok);
  fprintf(f, "%-14s %13s %13s %13s %7s %13s %7s %13s %7s %13s %7s\n", "quantity", "mean", "sd",
          "min", "run", "max", "run", "lowest", "run", "highest", "run");
  for (int i = 0; i < n; i++) {
    const SweepStat *s = &t->stats[i];
    char name[128];
    stat_name(m, i, name, sizeof name);
    if (s->n == 0) {
      fprintf(f, "%-14s (no finite values)\n", name);
      continue;
    }
    double sd = s->n > 1 ? sqrt(s->m2 / (double)(s->n - 1)) : 0.0;
    fprintf(f, "%-14s %13.6g %13.6g %13.6g %7ld %13.6g %7ld %13.6g %7ld %13.6g %7ld\n", name,
            s->mean, sd, s->lo, s->lo_run, s->hi, s->hi_run, s->env_lo, s->env_lo_run,
            s->env_hi, s->env_hi_run);
  }
}

/* ----------------------------------------------------- MPI records */

/* Layout in doubles: run, t, dE, status, events, values, x, y, qmin, qmax,
** ymin, ymax, trace; then the message's bytes. */
static size_t record_doubles(const struct eom_model *m, int nvars, int trace_points) {
  size_t nq = (size_t)m->nq, ny = (size_t)m->ny;
  size_t trace = trace_points > 1 ? (size_t)trace_points * (nq + ny) : 0;
  return 5 + (size_t)nvars + 4 * nq + 3 * ny + trace;
}

size_t sweep_record_size(const struct eom_model *m, int nvars, int trace_points) {
  return record_doubles(m, nvars, trace_points) * sizeof(double) + MESSAGE_BYTES;
}

void sweep_record_pack(const struct eom_model *m, int nvars, int trace_points,
                       const struct eom_sweep_run *r, unsigned char *dst) {
  size_t nq = (size_t)m->nq, ny = (size_t)m->ny, at = 0;
  size_t nd = record_doubles(m, nvars, trace_points);
  double head[5] = {(double)r->run, r->t, r->energy_change, (double)r->status,
                    (double)r->events};
#define PUT(src, count)                                          \
  do {                                                           \
    memcpy(dst + at, (src), (count) * sizeof(double));           \
    at += (count) * sizeof(double);                              \
  } while (0)
  PUT(head, 5);
  PUT(r->values, (size_t)nvars);
  PUT(r->x, 2 * nq);
  PUT(r->y, ny);
  PUT(r->qmin, nq);
  PUT(r->qmax, nq);
  PUT(r->ymin, ny);
  PUT(r->ymax, ny);
  if (trace_points > 1) PUT(r->trace, (size_t)trace_points * (nq + ny));
#undef PUT
  assert(at == nd * sizeof(double));
  memset(dst + at, 0, MESSAGE_BYTES);
  snprintf((char *)dst + at, MESSAGE_BYTES, "%s", r->message ? r->message : "");
}

void sweep_record_unpack(const struct eom_model *m, int nvars, int trace_points,
                         const unsigned char *src, double *storage, struct eom_sweep_run *r) {
  size_t nq = (size_t)m->nq, ny = (size_t)m->ny;
  size_t nd = record_doubles(m, nvars, trace_points);
  memcpy(storage, src, sweep_record_size(m, nvars, trace_points));
  double *d = storage;
  memset(r, 0, sizeof *r);
  r->run = (long)d[0], r->t = d[1], r->energy_change = d[2], r->status = (eom_status)d[3];
  r->events = (long)d[4];
  d += 5;
  r->values = d, d += nvars;
  r->x = d, d += 2 * nq;
  r->y = d, d += ny;
  r->qmin = d, d += nq;
  r->qmax = d, d += nq;
  r->ymin = d, d += ny;
  r->ymax = d, d += ny;
  r->trace = trace_points > 1 ? d : NULL;
  char *msg = (char *)(storage + nd);
  msg[MESSAGE_BYTES - 1] = '\0';
  r->message = msg;
}
