/*
** emit_select.c — `eomc gen --only LIST`: write only some generated
** functions and what they need.
**
** The model's functions are named as in P.h after the prefix (mass, accel,
** jacobian, coriolis, frame_tool, ...).  A listed function brings those it
** calls: rhs needs accel; accel, jacobian and accel_constrained share the
** static LDLᵀ routines.  The parameter and initial-state functions are
** always written: every caller needs them.  The writers ask emit_wants()
** before each function of P.c; P.h and the descriptor are written as
** usual and then filtered here, so the prototypes of the functions left
** out disappear and their descriptor pointers become 0 (the way a model
** without constraints has no constraint functions).
*/
#include "emit/emit_internal.h"

#include <assert.h>
#include <ctype.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Written whatever the list says. */
static const char *const always[] = {"default_params", "derived_params", "initial_state"};

static void add_name(Emitter *E, const char *name) {
  char **names = realloc(E->fn_names, (size_t)(E->nfn + 1) * sizeof *names);
  int *sel = realloc(E->fn_selected, (size_t)(E->nfn + 1) * sizeof *sel);
  char *copy = malloc(strlen(name) + 1);
  if (!names || !sel || !copy) {
    fputs("eomc: out of memory\n", stderr);
    abort();
  }
  strcpy(copy, name);
  E->fn_names = names;
  E->fn_selected = sel;
  E->fn_names[E->nfn] = copy;
  E->fn_selected[E->nfn++] = 0;
}

/* Every function P.c can have for this model, in the order it is written. */
static void list_functions(Emitter *E) {
  static const char *const base[] = {"mass", "forcing", "accel", "rhs", "jacobian",
                                     "inverse", "energy", "outputs"};
  const EomSystem *s = E->s;
  for (size_t i = 0; i < sizeof base / sizeof *base; i++) add_name(E, base[i]);
  if (s->ns) add_name(E, "switches");
  if (s->nc) {
    add_name(E, "constraint");
    add_name(E, "constraint_jacobian");
    add_name(E, "constraint_at");
  }
  if (s->nvc) add_name(E, "velocity_constraint");
  if (s->nc + s->nvc) add_name(E, "accel_constrained");
  if (s->nc) add_name(E, "constraint_gamma");
  PlainFunction fns[EMIT_CONTROL_MAX_FUNCTIONS];
  int nfns = emit_control_functions(s, fns);
  for (int k = 0; k < nfns; k++) add_name(E, fns[k].fname);
  KinematicFunction *kfns = NULL;
  int nk = emit_kinematics_functions(E->m, s, &kfns);
  for (int k = 0; k < nk; k++) add_name(E, kfns[k].fname);
  emit_kinematics_free(kfns, nk);
}

static int find_name(const Emitter *E, const char *name, size_t len) {
  for (int i = 0; i < E->nfn; i++)
    if (strlen(E->fn_names[i]) == len && strncmp(E->fn_names[i], name, len) == 0) return i;
  return -1;
}

static void select_name(Emitter *E, const char *name) {
  int i = find_name(E, name, strlen(name));
  if (i >= 0) E->fn_selected[i] = 1;
}

int select_functions(Emitter *E, const char *only, char *err, size_t errlen) {
  list_functions(E);
  if (!only) {
    for (int i = 0; i < E->nfn; i++) E->fn_selected[i] = 1;
    return 0;
  }
  E->only = 1;
  for (const char *c = only; *c;) {
    while (*c == ',' || *c == ' ') c++;
    size_t len = strcspn(c, ", ");
    if (!len) break;
    int i = find_name(E, c, len), known = i >= 0;
    for (size_t k = 0; k < sizeof always / sizeof *always; k++)
      known |= strlen(always[k]) == len && strncmp(always[k], c, len) == 0;
    if (!known) {
      int n = snprintf(err, errlen, "--only: this model has no generated function '%.*s'; it has",
                       (int)(len > 60 ? 60 : len), c);
      for (int k = 0; k < E->nfn && n > 0 && (size_t)n < errlen; k++)
        n += snprintf(err + n, errlen - (size_t)n, "%s %s", k ? "," : "", E->fn_names[k]);
      return -1;
    }
    if (i >= 0) E->fn_selected[i] = 1;
    c += len;
  }
  if (emit_wants(E, "rhs")) select_name(E, "accel");   /* P_rhs calls P_accel */
  return 0;
}

int emit_wants(const Emitter *E, const char *fname) {
  int i = find_name(E, fname, strlen(fname));
  assert(i >= 0 || !E->only);
  return !E->only || (i >= 0 && E->fn_selected[i]);
}

void select_free(Emitter *E) {
  for (int i = 0; i < E->nfn; i++) free(E->fn_names[i]);
  free(E->fn_names);
  free(E->fn_selected);
}

/* Is text[0..len) the name P_fname of a function left out? */
static int left_out(const Emitter *E, const char *id, size_t len) {
  size_t plen = strlen(E->P);
  if (len <= plen + 1 || strncmp(id, E->P, plen) != 0 || id[plen] != '_') return 0;
  int i = find_name(E, id + plen + 1, len - plen - 1);
  return i >= 0 && !E->fn_selected[i];
}

/* P.h: copy, leaving out the prototypes of functions left out (a line
** starting `void P_name(` or `int P_name(`, up to the line ending its
** declaration with `);`). */
static const char *next_line(const char *line) {
  const char *end = strchr(line, '\n');
  return end ? end + 1 : line + strlen(line);
}

/* If `line` starts the prototype of a function left out, the text after
** the prototype's last line; else NULL. */
static const char *skip_prototype(const Emitter *E, const char *line) {
  const char *id = strncmp(line, "void ", 5) == 0 ? line + 5
                 : strncmp(line, "int ", 4) == 0 ? line + 4 : NULL;
  size_t len = 0;
  while (id && (isalnum((unsigned char)id[len]) || id[len] == '_')) len++;
  if (!id || id[len] != '(' || !left_out(E, id, len)) return NULL;
  const char *close = strstr(line, ");");
  assert(close);
  return next_line(close);
}

/* P.h: copy, leaving out the prototypes of functions left out (from a line
** `void P_name(` or `int P_name(` to the line that closes it with `);`),
** and a comment that stands right above one of them. */
void select_filter_header(const Emitter *E, const char *text, FILE *out) {
  const char *line = text;
  while (*line) {
    const char *after = skip_prototype(E, line);
    if (!after && strncmp(line, "/*", 2) == 0) {
      const char *close = strstr(line, "*/");
      const char *below = close ? next_line(close) : NULL;
      const char *skip = below && *below ? skip_prototype(E, below) : NULL;
      if (skip) after = skip;
    }
    if (after) {
      line = after;
      continue;
    }
    const char *end = next_line(line);
    fwrite(line, 1, (size_t)(end - line), out);
    line = end;
  }
}

/* The descriptor: every identifier naming a function left out becomes 0
** (comments and strings are copied as they are). */
void select_filter_descriptor(const Emitter *E, const char *text, FILE *out) {
  for (const char *c = text; *c;) {
    if (c[0] == '/' && c[1] == '*') {
      const char *end = strstr(c + 2, "*/");
      end = end ? end + 2 : c + strlen(c);
      fwrite(c, 1, (size_t)(end - c), out);
      c = end;
    } else if (*c == '"') {
      const char *d = c + 1;
      while (*d && *d != '"') d += d[0] == '\\' && d[1] ? 2 : 1;
      if (*d) d++;
      fwrite(c, 1, (size_t)(d - c), out);
      c = d;
    } else if (isalpha((unsigned char)*c) || *c == '_') {
      const char *d = c;
      while (isalnum((unsigned char)*d) || *d == '_') d++;
      if (left_out(E, c, (size_t)(d - c))) fputc('0', out);
      else fwrite(c, 1, (size_t)(d - c), out);
      c = d;
    } else {
      fputc(*c++, out);
    }
  }
}
