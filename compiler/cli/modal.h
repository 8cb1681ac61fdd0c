/*
** modal.h — natural frequencies and mode shapes of M q'' + C q' + K q = 0
** (LAPACK: dsygv for the undamped symmetric case, dgeev otherwise).
*/
#ifndef EOMC_MODAL_H
#define EOMC_MODAL_H

#include <stddef.h>

typedef enum ModeKind {
  MODE_OSCILLATING,  /* stable oscillation: omega > 0 */
  MODE_NEUTRAL,      /* omega^2 = 0 (within rounding): a free direction */
  MODE_UNSTABLE,     /* grows like exp(rate t) (omega^2 < 0, or Re s > 0) */
  MODE_DECAYING      /* real, overdamped: decays like exp(-rate t) */
} ModeKind;

typedef struct Mode {
  ModeKind kind;
  double omega2;     /* undamped: the eigenvalue omega^2 (may be negative) */
  double omega;      /* rad/s: natural frequency (|s| when damped) */
  double omega_d;    /* damped: the oscillation frequency Im s; undamped: omega */
  double zeta;       /* damped: damping ratio -Re s / |s|; undamped: 0 */
  double rate;       /* 1/s: growth (unstable) or decay (decaying) rate */
  double *shape;     /* nq: amplitudes, largest magnitude 1 */
  double *phase;     /* nq: phase in degrees relative to the largest (damped) */
} Mode;

typedef struct ModalResult {
  int nq;
  int damped;        /* 1: solved from the state matrix (C != 0 or K not symmetric) */
  int nmodes;
  Mode *modes;       /* oscillating modes by frequency, then the others */
} ModalResult;

/* Analyse the row-major nq x nq matrices (C may be NULL: no damping).
** Returns 0, or -1 with a message in err (M not positive definite, LAPACK
** failure, out of memory).  Free the result with modal_free either way. */
int modal_analyze(int nq, const double *M, const double *C, const double *K, ModalResult *out,
                  char *err, size_t errlen);
void modal_free(ModalResult *r);

/* Map shapes from r->nq tangent coordinates z to nq model coordinates
** v = N z (N row-major nq x nq, columns 0..r->nq-1 used), renormalized as
** above.  Returns 0, or -1 when out of memory (r unchanged). */
int modal_expand(ModalResult *r, int nq, const double *N);

#endif
