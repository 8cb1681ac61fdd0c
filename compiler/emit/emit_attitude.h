/*
** emit_attitude.h — what P.h and P.c get for a model with attitudes.
**
** An attitude's quaternion sits in q after the coordinates (4 entries each,
** [w, x, y, z]) and its body-frame angular velocity omega in v after the
** coordinates' rates (3 each).  The state is x = [q; v] (NQ + NV entries)
** and q' = N(q) v.  emit_c.c calls these only when the model has attitudes,
** so models without them generate exactly what they did before.
*/
#ifndef EOMC_EMIT_ATTITUDE_H
#define EOMC_EMIT_ATTITUDE_H

#include <stdio.h>
#include "front/check.h"

/* P.h: P_NV, the index macros of the attitudes, the prototypes below. */
void emit_attitude_header(FILE *o, const Model *m, const char *P);
/* P.c: P_kinematics (q' = N(q) v) and P_normalize (unit quaternions). */
void emit_attitude_functions(FILE *o, const Model *m, const char *P);
/* Inside P_jacobian: the rows of d q'/dx in A (NQ + NV wide), where x is
** the state array; every other entry of those rows is already 0. */
void emit_attitude_jacobian_rows(FILE *o, const Model *m, int nq, int nv);
/* P.c: the descriptor's tables of the attitudes (names, rate names). */
void emit_attitude_tables(FILE *o, const Model *m, const char *P);
/* P.c: the descriptor's fields since ABI 8 (for any model). */
void emit_attitude_fields(FILE *o, const Model *m, const char *P);

#endif
