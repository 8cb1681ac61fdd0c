/*
** handmodels.h — hand-written models implementing struct eom_model, so the
** runtime is tested on known physics independently of the code generator.
*/
#ifndef EOMC_HANDMODELS_H
#define EOMC_HANDMODELS_H

#include "eom/model.h"

/* Simple pendulum: coord theta; params m, L, g; input tau (torque). */
extern const struct eom_model tm_pendulum;
/* Two masses between three springs: coords x1, x2; params m, k, c (dampers
** from each mass to ground). */
extern const struct eom_model tm_chain;
/* Point mass in a central 1/r potential, polar coordinates r, phi; params m, mu. */
extern const struct eom_model tm_kepler;
/* Mass-spring-damper: coord x; params m, k, c; input F; output spring_force. */
extern const struct eom_model tm_oscillator;
/* Double pendulum, equal masses and lengths: coords th1, th2; params m, l, g.
** It has no jacobian, so the runtime's finite differences are exercised. */
extern const struct eom_model tm_double_pendulum;
/* Two masses joined by one spring and nothing else: coords x1, x2; params
** m, k.  Free to translate, so df/dq is singular. */
extern const struct eom_model tm_free_pair;
/* The pendulum with a jacobian of the wrong sign, as a broken generator
** might write it: the runtime must not trust it. */
extern const struct eom_model tm_pendulum_bad_jacobian;
/* The simple pendulum in Cartesian coordinates x, y of the bob, held on
** the circle x^2 + y^2 = L^2 by a constraint (nc = 1); params m, L, g. */
extern const struct eom_model tm_cartesian_pendulum;
/* A coordinate whose mass 1 - x vanishes at x = 1: accel() must fail there. */
extern const struct eom_model tm_vanishing_mass;

#endif
