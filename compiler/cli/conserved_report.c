/*
** conserved_report.c — print the split and the constants of the motion that
** symbolic_control.cc found (see conserved_report.h).  The wording is
** stable: tests and scripts read these lines.
*/
#include <assert.h>
#include "sym/base_params.h"
#include "cli/conserved_report.h"

void report_identifiability(const Model *m, const EomSystem *s, const char *prefix, FILE *out) {
  BaseParams b;
  if (s->ni == 0 || !s->regressor) return;
  if (base_params_analyse(m, s, &b) != 0) {
    fprintf(out, "%sidentify: out of memory in the analysis\n", prefix);
    return;
  }
  base_params_report(m, s, &b, prefix, out);
  base_params_free(&b);
}

void report_structure(const Model *m, const EomSystem *s, FILE *out) {
  assert(m && s && s->cyclic && m->ncoords + 4 * m->nattitudes == s->nq);
  if (s->has_split)
    fputs("M/C/g split: available (M q'' + C q' + g = Q - dD/dq'; P_coriolis, P_gravity)\n", out);
  else
    fprintf(out, "M/C/g split: not available: %s\n", s->split_why);
  int n = 0;
  for (int i = 0; i < m->ncoords; i++) n += s->cyclic[i] != 0;   /* omegas never are */
  n += s->energy_conserved != 0;
  fprintf(out, "conserved quantities (%d):\n", n);
  for (int i = 0; i < m->ncoords; i++)
    if (s->cyclic[i])
      fprintf(out, "  momentum of %s (dL/d%s'): %s is cyclic\n", m->coords[i]->name,
              m->coords[i]->name, m->coords[i]->name);
  if (s->energy_conserved)
    fputs("  energy function h = q'.dL/dq' - L\n", out);
  else
    fprintf(out, "  (energy function not conserved: %s)\n", s->energy_why);
  report_identifiability(m, s, "", out);
}
