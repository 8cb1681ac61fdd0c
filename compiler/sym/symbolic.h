/*
** symbolic.h — the C interface of the symbolic core (symbolic*.cc, GiNaC).
**
** sym_derive() turns a checked Model into an EomSystem: every quantity the
** generated code needs, as root nodes of one shared IrGraph.  Matrices are
** row-major arrays of node indices.  A root may be a structural zero (an
** IR_NUM node with num == 0); the emitter skips those.
**
** Conventions (docs/generated-c.md): M(q) v' = f(t, q, v, u); the state is
** x = [q; v].  Without attitudes v = q' (nv == nq); each attitude adds 4
** entries to q (its quaternion, after the coordinates) and 3 to v (its
** body-frame omega), with q' = N(q) v (written by the emitter: emit_attitude.c).  Below, "qd"
** and "qdd" stand for v and v', and matrices over rates are nv wide.
*/
#ifndef EOMC_SYMBOLIC_H
#define EOMC_SYMBOLIC_H

#include "front/check.h"
#include "front/diag.h"
#include "sym/ir.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Where a switching function comes from: a branch function of the model's
** terms (docs/language.md), at line:col of its call. */
typedef struct EomSwitch {
  int line, col;
  int fn;      /* BuiltinFn: sign, step, abs, min, max or clamp */
  int part;    /* clamp: 1 for x - lo, 2 for x - hi; else 0 */
} EomSwitch;

typedef struct EomSystem {
  IrGraph g;
  int nq, nu, np, ny, nc;
  int nv;             /* velocities: nq - nattitudes */
  int nattitudes;
  int *mass;          /* nv*nv  M(q, p), symmetric */
  int *forcing;       /* nv     f(t, q, qd, u, p) */
  int *dmass_dq;      /* nq*nv*nv: [k*nv*nv + i*nv + j] = dM_ij/dq_k */
  int *dforcing_dq;   /* nv*nq  [i*nq + j] = df_i/dq_j */
  int *dforcing_dqd;  /* nv*nv  [i*nv + j] = df_i/dqd_j */
  int *dforcing_du;   /* nv*nu  [i*nu + j] = df_i/du_j */
  int *inverse;       /* nv     M qdd - f(u = 0), in terms of IRV_QDD */
  int energy_T, energy_V;
  int *outputs;       /* ny     y(t, q, qd, u, p) */
  int *constraint;    /* nc     phi(q, p) (t allowed) */
  int *constraint_jacobian;  /* nc*nq  G = dphi/dq */
  int *constraint_gamma;     /* nc     gamma with G qdd = gamma */
  int *constraint_dt;        /* nc     dphi/dt (explicit time), so phi' = G qd + dphi/dt */
  /* velocity constraints A(t, q) qd = b(t, q), after the nc position ones */
  int nvc;
  int *vconstraint_A;        /* nvc*nq */
  int *vconstraint_b;        /* nvc */
  int *vconstraint_gamma;    /* nvc    gamma(t, q, qd) with A qdd = gamma */
  int vc_integrable;         /* 1: together they pass Frobenius' test (could be positions) */
  /* symbolic_control.cc: M qdd + C qd + g = Q - dD/dqd, momenta, constants
  ** of the motion */
  int has_split;             /* L = qd^T M qd / 2 - V(q), free of t and u */
  char split_why[200];       /* why not, when !has_split */
  int *coriolis;             /* nq*nq  C(q, qd, p); NULL without the split */
  int *gravity;              /* nq     g(q, p) = dV/dq; NULL without the split */
  int *momenta;              /* nq     dL/dqd */
  int hamiltonian;           /* qd . dL/dqd - L */
  int *cyclic;               /* nq     1: q_i is cyclic, momenta[i] is conserved */
  int energy_conserved;      /* 1: the hamiltonian is a constant of the motion */
  char energy_why[200];      /* why not, when !energy_conserved */
  /* the regressor form P_inverse = Y pi + tau0, pi = the `identify` params */
  int ni;                    /* identified parameters (0: none) */
  int *identified;           /* ni     their indices in p */
  int *regressor;            /* nq*ni  Y(t, q, qd, qdd, p) */
  int *regressor_offset;     /* nq     tau0: P_inverse at pi = 0 */
  /* symbolic_outputs.cc: outputs that depend on q and p only ("kinematic") */
  int nkinematic;            /* entries of y that are kinematic */
  int *output_kinematic;     /* ny     1 when y_i = y_i(q, p) */
  int *output_jacobian;      /* ny*nq  dy_i/dq_j; -1 in rows that are not kinematic */
  int *output_bias;          /* ny     J' qd (y'' = J qdd + J' qd); -1 where not kinematic */
  int nframes;               /* `frame` outputs, in declaration order */
  int *frame_output;         /* nframes  index in y of the frame's first entry */
  int *frame_decl;           /* nframes  index in Model.outputs */
  int *frame_jacobian;       /* nframes*6*nq  world linear (3 rows) over world angular (3) */
  int *frame_bias;           /* nframes*6     J' qd */
  /* params whose default is an expression of earlier params */
  int *param_rule;           /* np     that expression of p, or -1 for a plain default */
  int nderived;              /* entries of param_rule that are not -1 */
  /* switching functions s(t, q, qd, u, p): a branch of a non-smooth term
  ** changes where one changes sign (duplicates and constants left out) */
  int ns;
  int *switches;             /* ns */
  EomSwitch *switch_info;    /* ns */
  /* end stops: gap g(t, q, p) = LEFT - RIGHT >= 0, its gradient G = dg/dq
  ** and gamma = -(g'' at qdd = 0), so that g'' = G qdd - gamma */
  int nstops;
  int *stop_gap;             /* nstops */
  int *stop_gradient;        /* nstops*nv  G = dg/dq */
  int *stop_gamma;           /* nstops     gamma with g'' = G qdd - gamma */
  const struct Stmt **stop_stmt;  /* nstops: the statement (location, text, bounce) */
} EomSystem;

typedef struct SymOptions {
  int no_cse;          /* keep the graph a tree-like expansion (for benchmarks) */
  double max_seconds;  /* 0: no limit */
} SymOptions;

/* Derive the equations of motion of `m`.  Returns 0 on success; on failure
** reports errors to `d` (with the offending term's location) and returns
** nonzero.  `out` must be freed with sym_free() either way. */
int sym_derive(const Model *m, const SymOptions *opt, Diag *d, EomSystem *out);
void sym_free(EomSystem *s);

#ifdef __cplusplus
}
#endif
#endif
