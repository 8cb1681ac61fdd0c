/*
** units.h — physical units: parse unit annotations, check a model's units.
**
** A Unit is a vector of exponents over the SI base dimensions plus `rad`.
** Exponents are rationals with the fixed denominator UNIT_DEN, so that
** sqrt(m^2) is m and sqrt(m) is m^(1/2).  `rad` is dimensionless: it is kept
** so a declared unit prints as written, but comparisons ignore it (a torque
** N*m fits "energy per rad").
**
** The model-wide check (units_check_model) runs only when every coordinate
** and parameter has a unit; see units.c for the rules.
*/
#ifndef EOMC_UNITS_H
#define EOMC_UNITS_H

#include "front/ast.h"
#include "front/diag.h"

struct Model;

/* Base dimensions, in the order units print. */
enum { U_KG, U_M, U_S, U_A, U_K, U_MOL, U_CD, U_RAD, U_NDIM };

/* Exponents are stored as multiples of 1/UNIT_DEN. */
#define UNIT_DEN 60

typedef enum UnitKind {
  UNIT_KNOWN,      /* exp[] is the unit */
  UNIT_ANY,        /* the literal 0 (or an expression equal to it): fits any unit */
  UNIT_UNKNOWN,    /* depends on an input/const without a unit: not checked */
  UNIT_TRANSFORM   /* a 4x4 homogeneous transform: rotation part dimensionless,
                      translation part in exp[] */
} UnitKind;

typedef struct Unit {
  UnitKind kind;
  int exp[U_NDIM];
} Unit;

/* Parse the unit annotation `e` (unit symbols, the number 1, * / ^ with
** integer exponents, parentheses) of a model.  Returns 0 and fills *u, or
** reports an error at the offending node and returns -1.  A model's units
** are coherent SI: a scaled symbol (deg, kN, mm) is an error here. */
int unit_parse(const Expr *e, Diag *d, Unit *u);

/* The same for a value given with a unit (`--set a=30[deg]`): scaled
** symbols are allowed and *scale is the unit's size in the coherent SI unit
** of its dimension (deg: pi/180; km/h: 1/3.6). */
int unit_parse_scaled(const Expr *e, Diag *d, Unit *u, double *scale);

Unit unit_dimensionless(void);
Unit unit_base(int dim);                    /* one base dimension to the power 1 */
Unit unit_mul(Unit a, Unit b);
Unit unit_div(Unit a, Unit b);
/* a^(num/den); returns -1 when an exponent would not be a multiple of 1/UNIT_DEN. */
int unit_pow(Unit a, long num, long den, Unit *out);
/* Same dimension, ignoring rad?  Both must be UNIT_KNOWN. */
int unit_same(Unit a, Unit b);
int unit_is_dimensionless(Unit a);          /* ignoring rad */
Unit unit_strip_rad(Unit a);

/* Print `u` as a product of powers: "kg*m^2/s^2", "1", "m^(1/2)".  Known
** composite units print by their symbol (N, J, W, Pa) when they match
** exactly.  `keep_rad` prints rad exponents too.  Returns `buf`. */
char *unit_format(Unit u, int keep_rad, char *buf, size_t n);

/* The unit annotation as written ("N*m/s"), in `a`; "" for NULL. */
char *unit_text(Arena *a, const Expr *unit);

/* Check the units of every term of a checked model whose coordinates and
** parameters all carry units.  Reports errors and warnings to `d`; returns
** the number of errors. */
int units_check_model(struct Model *m, Diag *d);

/* The unit of the equations of `constraint LEFT = RIGHT [UNIT]` in a
** unit-checked model (its annotation, else its sides').  Returns 0, or -1
** when it is not known. */
int units_of_constraint(const Stmt *s, Unit *u);

/* A constraint multiplier's unit from its equation's: energy per unit
** (power per unit for a velocity constraint). */
Unit units_of_multiplier(Unit phi, int velocity);

#endif
