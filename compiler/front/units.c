/*
** units.c — unit annotations and the model-wide dimensional check.
**
** Rules (docs/language.md, "Units"):
**  - kinetic, potential and lagrangian terms are energies (J); dissipation
**    terms are powers (W); `force q = e` is energy per unit of q (N for a
**    length, N*m for an angle);
**  - `+`, `-`, atan2's two arguments, constraint sides and the entries of a
**    vector or matrix agree; arguments of sin, exp, ... are dimensionless;
**  - a bare number is dimensionless, except 0, which fits any unit;
**  - x^e needs a dimensionless e; a dimensioned x needs a constant e, which
**    scales the exponents (sqrt halves them);
**  - q' has unit(q)/s, t has s;
**  - an input or const without a unit has an unknown unit: expressions that
**    use it are not checked (one warning per such name says so).
** `rad` never makes a mismatch: it is dimensionless.
*/
#include "front/units.h"

#include <assert.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include "front/builtins.h"
#include "front/check.h"

/* pi to double precision (M_PI is not C99). */
#define EOM_PI 3.14159265358979323846

static const char *const base_symbol[U_NDIM] = {"kg", "m", "s", "A", "K", "mol", "cd", "rad"};

Unit unit_dimensionless(void) {
  Unit u;
  memset(&u, 0, sizeof u);
  u.kind = UNIT_KNOWN;
  return u;
}

Unit unit_base(int dim) {
  assert(dim >= 0 && dim < U_NDIM);
  Unit u = unit_dimensionless();
  u.exp[dim] = UNIT_DEN;
  return u;
}

/* kg^a m^b s^c, the building block of the derived SI units. */
static Unit unit_kms(int kg, int m, int s) {
  Unit u = unit_dimensionless();
  u.exp[U_KG] = kg * UNIT_DEN;
  u.exp[U_M] = m * UNIT_DEN;
  u.exp[U_S] = s * UNIT_DEN;
  return u;
}

Unit unit_mul(Unit a, Unit b) {
  assert(a.kind == UNIT_KNOWN && b.kind == UNIT_KNOWN);
  for (int i = 0; i < U_NDIM; i++) a.exp[i] += b.exp[i];
  return a;
}

Unit unit_div(Unit a, Unit b) {
  assert(a.kind == UNIT_KNOWN && b.kind == UNIT_KNOWN);
  for (int i = 0; i < U_NDIM; i++) a.exp[i] -= b.exp[i];
  return a;
}

/* Largest exponent magnitude kept: far beyond any physical unit, small
** enough that products never overflow an int. */
#define UNIT_MAX_EXP (1000 * UNIT_DEN)

int unit_pow(Unit a, long num, long den, Unit *out) {
  assert(a.kind == UNIT_KNOWN && den > 0);
  for (int i = 0; i < U_NDIM; i++) {
    long long p = (long long)a.exp[i] * num;
    if (p % den != 0) return -1;
    p /= den;
    if (p > UNIT_MAX_EXP || p < -UNIT_MAX_EXP) return -1;
    a.exp[i] = (int)p;
  }
  *out = a;
  return 0;
}

Unit unit_strip_rad(Unit a) {
  a.exp[U_RAD] = 0;
  return a;
}

int unit_same(Unit a, Unit b) {
  assert(a.kind == UNIT_KNOWN && b.kind == UNIT_KNOWN);
  for (int i = 0; i < U_NDIM; i++)
    if (i != U_RAD && a.exp[i] != b.exp[i]) return 0;
  return 1;
}

int unit_is_dimensionless(Unit a) {
  return a.kind == UNIT_KNOWN && unit_same(a, unit_dimensionless());
}

/* ------------------------------------------------------------ printing */

typedef struct Buf {
  char *p;
  size_t n, len;
} Buf;

static void put(Buf *b, const char *s) {
  size_t k = strlen(s);
  if (b->n == 0) return;
  if (b->len + k >= b->n) k = b->n - 1 - b->len;
  memcpy(b->p + b->len, s, k);
  b->len += k;
  b->p[b->len] = '\0';
}

static void put_power(Buf *b, const char *sym, int e) {
  char tmp[48];
  int whole = e / UNIT_DEN, frac = e % UNIT_DEN;
  put(b, sym);
  if (frac == 0) {
    if (whole != 1) {
      snprintf(tmp, sizeof tmp, "^%d", whole);
      put(b, tmp);
    }
    return;
  }
  /* Reduce e/UNIT_DEN. */
  int num = e, den = UNIT_DEN, x = num < 0 ? -num : num, y = den;
  while (y) {
    int r = x % y;
    x = y;
    y = r;
  }
  snprintf(tmp, sizeof tmp, "^(%d/%d)", num / x, den / x);
  put(b, tmp);
}

char *unit_format(Unit u, int keep_rad, char *buf, size_t n) {
  static const struct {
    const char *sym;
    int kg, m, s;
  } named[] = {{"N", 1, 1, -2}, {"J", 1, 2, -2}, {"W", 1, 2, -3}, {"Pa", 1, -1, -2}};
  Buf b = {buf, n, 0};
  assert(n > 0);
  buf[0] = '\0';
  switch (u.kind) {
  case UNIT_ANY: put(&b, "any unit (zero)"); return buf;
  case UNIT_UNKNOWN: put(&b, "unknown"); return buf;
  case UNIT_TRANSFORM: put(&b, "transform"); return buf;
  case UNIT_KNOWN: break;
  }
  if (!keep_rad) u.exp[U_RAD] = 0;
  for (size_t i = 0; i < sizeof named / sizeof named[0]; i++) {
    Unit w = unit_kms(named[i].kg, named[i].m, named[i].s);
    w.exp[U_RAD] = u.exp[U_RAD];
    if (memcmp(w.exp, u.exp, sizeof w.exp) == 0) {
      put(&b, named[i].sym);
      if (u.exp[U_RAD]) {
        put(&b, u.exp[U_RAD] > 0 ? "*" : "/");
        put_power(&b, "rad", u.exp[U_RAD] > 0 ? u.exp[U_RAD] : -u.exp[U_RAD]);
      }
      return buf;
    }
  }
  int nnum = 0, nden = 0;
  for (int i = 0; i < U_NDIM; i++) {
    if (u.exp[i] > 0) {
      if (nnum++) put(&b, "*");
      put_power(&b, base_symbol[i], u.exp[i]);
    }
  }
  if (!nnum) put(&b, "1");
  for (int i = 0; i < U_NDIM; i++)
    if (u.exp[i] < 0) nden++;
  if (nden) {
    put(&b, "/");
    if (nden > 1) put(&b, "(");
    int k = 0;
    for (int i = 0; i < U_NDIM; i++) {
      if (u.exp[i] < 0) {
        if (k++) put(&b, "*");
        put_power(&b, base_symbol[i], -u.exp[i]);
      }
    }
    if (nden > 1) put(&b, ")");
  }
  return buf;
}

/* ------------------------------------------------------------ annotations */

/* The one table of unit symbols.  `scale` is the symbol's size in the
** coherent SI unit of its dimension (deg = pi/180 rad, kN = 1000 N); a
** symbol marked `prefixable` also takes an SI prefix (PREFIXES below):
** mm, kN, MPa, ms, mrad.  Dimensions are kg, m, s, A, K, mol, cd, rad
** exponents (whole numbers). */
typedef struct UnitSymbol {
  const char *sym;
  int kg, m, s, a, k, mol, cd, rad;
  double scale;
  int prefixable;
} UnitSymbol;

static const UnitSymbol unit_symbols[] = {
  /* coherent SI: base units, then the derived ones with names */
  {"kg", 1, 0, 0, 0, 0, 0, 0, 0, 1.0, 0},
  {"m", 0, 1, 0, 0, 0, 0, 0, 0, 1.0, 1},
  {"s", 0, 0, 1, 0, 0, 0, 0, 0, 1.0, 1},
  {"A", 0, 0, 0, 1, 0, 0, 0, 0, 1.0, 1},
  {"K", 0, 0, 0, 0, 1, 0, 0, 0, 1.0, 0},
  {"mol", 0, 0, 0, 0, 0, 1, 0, 0, 1.0, 1},
  {"cd", 0, 0, 0, 0, 0, 0, 1, 0, 1.0, 0},
  {"rad", 0, 0, 0, 0, 0, 0, 0, 1, 1.0, 1},
  {"N", 1, 1, -2, 0, 0, 0, 0, 0, 1.0, 1},
  {"J", 1, 2, -2, 0, 0, 0, 0, 0, 1.0, 1},
  {"W", 1, 2, -3, 0, 0, 0, 0, 0, 1.0, 1},
  {"Pa", 1, -1, -2, 0, 0, 0, 0, 0, 1.0, 1},
  {"Hz", 0, 0, -1, 0, 0, 0, 0, 0, 1.0, 1},
  /* scaled units engineers write (BIPM, The International System of Units,
  ** 9th edition, 2019, tables 8 and 7: units accepted for use with the SI) */
  {"g", 1, 0, 0, 0, 0, 0, 0, 0, 1e-3, 1},
  {"t", 1, 0, 0, 0, 0, 0, 0, 0, 1e3, 0},
  {"min", 0, 0, 1, 0, 0, 0, 0, 0, 60.0, 0},
  {"h", 0, 0, 1, 0, 0, 0, 0, 0, 3600.0, 0},
  {"deg", 0, 0, 0, 0, 0, 0, 0, 1, EOM_PI / 180, 0},
  {"rev", 0, 0, 0, 0, 0, 0, 0, 1, 2 * EOM_PI, 0},
  {"rpm", 0, 0, -1, 0, 0, 0, 0, 1, 2 * EOM_PI / 60, 0},
  {"bar", 1, -1, -2, 0, 0, 0, 0, 0, 1e5, 0},
};

/* SI prefixes a prefixable symbol takes (BIPM 2019, table 7). */
static const struct {
  char c;
  double scale;
} unit_prefixes[] = {{'G', 1e9}, {'M', 1e6}, {'k', 1e3}, {'c', 1e-2},
                     {'m', 1e-3}, {'u', 1e-6}, {'n', 1e-9}};

#define NSYMBOLS (sizeof unit_symbols / sizeof unit_symbols[0])

static Unit symbol_unit(const UnitSymbol *y) {
  Unit u = unit_kms(y->kg, y->m, y->s);
  u.exp[U_A] = y->a * UNIT_DEN;
  u.exp[U_K] = y->k * UNIT_DEN;
  u.exp[U_MOL] = y->mol * UNIT_DEN;
  u.exp[U_CD] = y->cd * UNIT_DEN;
  u.exp[U_RAD] = y->rad * UNIT_DEN;
  return u;
}

/* A symbol as written, or a prefix and a prefixable symbol.  Whole symbols
** win (min is the minute, mol the mole, cd the candela, Pa the pascal). */
static int lookup_symbol(const char *s, Unit *u, double *scale) {
  for (size_t i = 0; i < NSYMBOLS; i++)
    if (strcmp(s, unit_symbols[i].sym) == 0) {
      *u = symbol_unit(&unit_symbols[i]);
      *scale = unit_symbols[i].scale;
      return 1;
    }
  for (size_t p = 0; p < sizeof unit_prefixes / sizeof unit_prefixes[0]; p++) {
    if (s[0] != unit_prefixes[p].c) continue;
    for (size_t i = 0; i < NSYMBOLS; i++)
      if (unit_symbols[i].prefixable && strcmp(s + 1, unit_symbols[i].sym) == 0) {
        *u = symbol_unit(&unit_symbols[i]);
        *scale = unit_prefixes[p].scale * unit_symbols[i].scale;
        return 1;
      }
  }
  return 0;
}

/* An integer exponent: a number or a negated number. */
static int exponent_value(const Expr *e, long *out) {
  int sign = 1;
  while (e->kind == EX_UNARY && e->op == OP_NEG) {
    sign = -sign;
    e = e->args[0];
  }
  if (e->kind != EX_NUM || e->num != floor(e->num) || fabs(e->num) > 1000) return 0;
  *out = sign * (long)e->num;
  return 1;
}

int unit_parse_scaled(const Expr *e, Diag *d, Unit *u, double *scale) {
  Unit a, b;
  double sa, sb;
  long k;
  switch (e->kind) {
  case EX_NAME:
    if (lookup_symbol(e->name, u, scale)) return 0;
    diag_error(d, e->loc,
               "unknown unit '%s' (units are products of m kg s A K mol cd rad N J W Pa Hz, "
               "with SI prefixes as in mm kN MPa, and g t min h deg rev rpm bar)",
               e->name);
    return -1;
  case EX_NUM:
    if (e->num == 1) {
      *u = unit_dimensionless();
      *scale = 1.0;
      return 0;
    }
    diag_error(d, e->loc, "a unit cannot hold the number %g (only 1, for dimensionless)", e->num);
    return -1;
  case EX_BINARY:
    if (e->op == OP_MUL || e->op == OP_DIV) {
      if (unit_parse_scaled(e->args[0], d, &a, &sa) || unit_parse_scaled(e->args[1], d, &b, &sb))
        return -1;
      *u = e->op == OP_MUL ? unit_mul(a, b) : unit_div(a, b);
      *scale = e->op == OP_MUL ? sa * sb : sa / sb;
      return 0;
    }
    if (e->op == OP_POW) {
      if (unit_parse_scaled(e->args[0], d, &a, &sa)) return -1;
      if (!exponent_value(e->args[1], &k)) {
        diag_error(d, e->args[1]->loc, "a unit exponent must be an integer");
        return -1;
      }
      if (unit_pow(a, k, 1, u)) {
        diag_error(d, e->loc, "unit exponent too large");
        return -1;
      }
      *scale = pow(sa, (double)k);
      return 0;
    }
    break;
  default:
    break;
  }
  diag_error(d, e->loc, "not a unit: use SI symbols with *, / and ^ (e.g. [N*m/s])");
  return -1;
}

/* The first scaled symbol (deg, mm, kN) in a unit annotation, or NULL. */
static const Expr *first_scaled_symbol(const Expr *e) {
  Unit u;
  double scale;
  if (e->kind == EX_NAME) return lookup_symbol(e->name, &u, &scale) && scale != 1.0 ? e : NULL;
  for (int i = 0; i < e->nargs; i++) {
    const Expr *s = first_scaled_symbol(e->args[i]);
    if (s) return s;
  }
  return NULL;
}

/* A model's units are coherent SI: its numbers are used as written, with
** no conversion, so a scaled symbol would silently mean the wrong size. */
int unit_parse(const Expr *e, Diag *d, Unit *u) {
  double scale;
  if (unit_parse_scaled(e, d, u, &scale) != 0) return -1;
  if (scale != 1.0) {
    const Expr *sym = first_scaled_symbol(e);
    char coherent[128];
    unit_format(*u, 1, coherent, sizeof coherent);
    diag_error(d, sym ? sym->loc : e->loc,
               "'%s' is a scaled unit, but a model's units are coherent SI units, used with "
               "no conversion (here [%s]); scaled units are for values given on the command "
               "line (--set, --at)",
               sym ? sym->name : "?", coherent);
    return -1;
  }
  return 0;
}

static void text_of(Buf *b, const Expr *e, int prec) {
  char tmp[64];
  switch (e->kind) {
  case EX_NAME: put(b, e->name); return;
  case EX_NUM:
    snprintf(tmp, sizeof tmp, "%g", e->num);
    put(b, tmp);
    return;
  case EX_UNARY:
    put(b, "-");
    text_of(b, e->args[0], 3);
    return;
  case EX_BINARY: {
    int p = e->op == OP_POW ? 2 : 1;
    if (p < prec) put(b, "(");
    text_of(b, e->args[0], p == 2 ? 3 : 1);
    put(b, e->op == OP_MUL ? "*" : e->op == OP_DIV ? "/" : "^");
    text_of(b, e->args[1], p == 2 ? 2 : 2);
    if (p < prec) put(b, ")");
    return;
  }
  default: put(b, "?"); return;
  }
}

char *unit_text(Arena *a, const Expr *unit) {
  char buf[256];
  Buf b = {buf, sizeof buf, 0};
  buf[0] = '\0';
  if (unit) text_of(&b, unit, 0);
  return arena_strdup(a, buf);
}

/* ------------------------------------------------------------ model check */

typedef struct UnitCheck {
  Diag *d;
  int nerrors;
} UnitCheck;

static Unit unknown_unit(void) {
  Unit u = unit_dimensionless();
  u.kind = UNIT_UNKNOWN;
  return u;
}

static Unit any_unit(void) {
  Unit u = unit_dimensionless();
  u.kind = UNIT_ANY;
  return u;
}

static void uerror(UnitCheck *uc, SrcLoc loc, const char *fmt, ...) DIAG_PRINTF(3, 4);
static void uerror(UnitCheck *uc, SrcLoc loc, const char *fmt, ...) {
  va_list ap;
  uc->nerrors++;
  va_start(ap, fmt);
  diag_vreport(uc->d, DIAG_ERROR, loc, fmt, ap);
  va_end(ap);
}

/* Constant value of an exponent: numbers, pi and consts only (params may
** change at run time, and with them the unit). */
static int const_value(const Expr *e, double *v) {
  double a, b;
  switch (e->kind) {
  case EX_NUM: *v = e->num; return 1;
  case EX_NAME:
    if (!e->ref && strcmp(e->name, "pi") == 0) {
      *v = EOM_PI;
      return 1;
    }
    if (e->ref && e->ref->kind == DECL_CONST) {
      *v = e->ref->number;
      return 1;
    }
    return 0;
  case EX_UNARY:
    if (!const_value(e->args[0], &a)) return 0;
    *v = -a;
    return 1;
  case EX_BINARY:
    if (!const_value(e->args[0], &a) || !const_value(e->args[1], &b)) return 0;
    switch (e->op) {
    case OP_ADD: *v = a + b; break;
    case OP_SUB: *v = a - b; break;
    case OP_MUL: *v = a * b; break;
    case OP_DIV: *v = a / b; break;
    case OP_POW: *v = pow(a, b); break;
    default: return 0;
    }
    return isfinite(*v);
  default: return 0;
  }
}

/* Write v as num/den with den dividing UNIT_DEN; 0 when impossible. */
static int rational_exponent(double v, long *num, long *den) {
  for (long q = 1; q <= UNIT_DEN; q++) {
    if (UNIT_DEN % q) continue;
    double p = v * (double)q;
    if (fabs(p) < 1e6 && fabs(p - floor(p + 0.5)) < 1e-9) {
      *num = (long)floor(p + 0.5);
      *den = q;
      return 1;
    }
  }
  return 0;
}

/* Unit both operands of + - share (a mismatch is reported at `loc`). */
static Unit agree(UnitCheck *uc, Unit a, Unit b, SrcLoc loc, const char *what) {
  char sa[96], sb[96];
  if (a.kind == UNIT_UNKNOWN || b.kind == UNIT_UNKNOWN) return unknown_unit();
  if (a.kind == UNIT_ANY) return b;
  if (b.kind == UNIT_ANY) return a;
  if (a.kind == UNIT_TRANSFORM || b.kind == UNIT_TRANSFORM) return unknown_unit();
  if (unit_same(a, b)) return a;
  uerror(uc, loc, "%s have different units: %s and %s", what, unit_format(a, 0, sa, sizeof sa),
         unit_format(b, 0, sb, sizeof sb));
  return unknown_unit();
}

static Unit expr_unit(UnitCheck *uc, const Expr *e);

/* An argument that must be dimensionless (angles in rad are). */
static void need_dimensionless(UnitCheck *uc, const Expr *call, const Expr *arg) {
  char s[96];
  Unit u = expr_unit(uc, arg);
  if (u.kind == UNIT_KNOWN && !unit_is_dimensionless(u))
    uerror(uc, call->loc, "argument of %s must be dimensionless, not %s", call->name,
           unit_format(u, 0, s, sizeof s));
}

/* Unit of a scalar built-in's call, by its rule in builtins.h. */
static Unit scalar_call_unit(UnitCheck *uc, const Expr *e, UnitRule rule) {
  char s[96], what[48];
  Unit u;
  switch (rule) {
  case UR_DIMLESS:
    need_dimensionless(uc, e, e->args[0]);
    return unit_dimensionless();
  case UR_AGREE_RATIO:
  case UR_AGREE_KEEP:
    snprintf(what, sizeof what, "arguments of %s", e->name);
    u = expr_unit(uc, e->args[0]);
    for (int i = 1; i < e->nargs; i++) u = agree(uc, u, expr_unit(uc, e->args[i]), e->loc, what);
    return rule == UR_AGREE_RATIO ? unit_dimensionless() : u;
  case UR_ROOT: {
    Unit r;
    u = expr_unit(uc, e->args[0]);
    if (u.kind != UNIT_KNOWN) return u.kind == UNIT_ANY ? u : unknown_unit();
    if (unit_pow(u, 1, 2, &r) == 0) return r;
    uerror(uc, e->loc, "square root of a quantity in %s has no unit", unit_format(u, 0, s, sizeof s));
    return unknown_unit();
  }
  case UR_KEEP: return expr_unit(uc, e->args[0]);
  case UR_ANY_DIMLESS:
    (void)expr_unit(uc, e->args[0]);  /* its own terms must still agree */
    return unit_dimensionless();
  }
  assert(!"unknown unit rule");
  return unknown_unit();
}

static Unit call_unit(UnitCheck *uc, const Expr *e) {
  const char *f = e->name;
  if (strcmp(f, "omega") == 0 && e->args[0]->ref && e->args[0]->ref->kind == DECL_ATTITUDE)
    return unit_div(unit_base(U_RAD), unit_base(U_S));   /* an angular velocity, as an angle's rate */
  int fn = builtin_scalar(f);
  if (fn >= 0) return scalar_call_unit(uc, e, scalar_builtins[fn].unit);
  if (strcmp(f, "rotx") == 0 || strcmp(f, "roty") == 0 || strcmp(f, "rotz") == 0) {
    need_dimensionless(uc, e, e->args[0]);
    return unit_dimensionless();
  }
  if (strcmp(f, "dot") == 0 || strcmp(f, "cross") == 0) {
    Unit a = expr_unit(uc, e->args[0]), b = expr_unit(uc, e->args[1]);
    if (a.kind == UNIT_ANY || b.kind == UNIT_ANY) return any_unit();
    if (a.kind != UNIT_KNOWN || b.kind != UNIT_KNOWN) return unknown_unit();
    return unit_mul(a, b);
  }
  if (strcmp(f, "norm") == 0) return expr_unit(uc, e->args[0]);
  if (strcmp(f, "transpose") == 0) {
    Unit u = expr_unit(uc, e->args[0]);
    return u.kind == UNIT_TRANSFORM ? unknown_unit() : u;
  }
  if (strcmp(f, "diag") == 0) {
    Unit u = any_unit();
    for (int i = 0; i < e->nargs; i++)
      u = agree(uc, u, expr_unit(uc, e->args[i]), e->loc, "entries of diag");
    return u;
  }
  if (strcmp(f, "dh") == 0) {
    need_dimensionless(uc, e, e->args[0]);
    need_dimensionless(uc, e, e->args[3]);
    Unit len = agree(uc, expr_unit(uc, e->args[1]), expr_unit(uc, e->args[2]), e->loc,
                     "offsets d and a of dh");
    if (len.kind != UNIT_KNOWN) return unknown_unit();
    len.kind = UNIT_TRANSFORM;
    return len;
  }
  if (strcmp(f, "pos") == 0 || strcmp(f, "rot") == 0) {
    Unit u = expr_unit(uc, e->args[0]);
    if (u.kind != UNIT_TRANSFORM) return u;
    if (f[0] == 'r') return unit_dimensionless();
    u.kind = UNIT_KNOWN;
    return u;
  }
  assert(!"unit of an unknown built-in");
  return unknown_unit();
}

static Unit pow_unit(UnitCheck *uc, const Expr *e) {
  char s[96], t[64];
  Unit base = expr_unit(uc, e->args[0]);
  Unit ex = expr_unit(uc, e->args[1]);
  if (ex.kind == UNIT_KNOWN && !unit_is_dimensionless(ex)) {
    uerror(uc, e->loc, "exponent must be dimensionless, not %s", unit_format(ex, 0, s, sizeof s));
    return unknown_unit();
  }
  if (base.kind != UNIT_KNOWN) return base.kind == UNIT_ANY ? base : unknown_unit();
  double v;
  long num, den;
  Unit r;
  if (const_value(e->args[1], &v)) {
    if (rational_exponent(v, &num, &den) && unit_pow(base, num, den, &r) == 0) return r;
    if (unit_is_dimensionless(base)) return unit_dimensionless();
    snprintf(t, sizeof t, "%g", v);
    uerror(uc, e->loc, "a quantity in %s cannot be raised to the power %s",
           unit_format(base, 0, s, sizeof s), t);
    return unknown_unit();
  }
  if (unit_is_dimensionless(base)) return unit_dimensionless();
  uerror(uc, e->loc, "the exponent of a quantity in %s must be a constant number",
         unit_format(base, 0, s, sizeof s));
  return unknown_unit();
}

static Unit expr_unit(UnitCheck *uc, const Expr *e) {
  Unit a, b;
  switch (e->kind) {
  case EX_NUM: return e->num == 0 ? any_unit() : unit_dimensionless();
  case EX_NAME:
    if (!e->ref) return strcmp(e->name, "t") == 0 ? unit_base(U_S) : unit_dimensionless();
    return e->ref->dim ? *e->ref->dim : unknown_unit();
  case EX_UNARY: return expr_unit(uc, e->args[0]);
  case EX_BINARY:
    if (e->op == OP_POW) return pow_unit(uc, e);
    a = expr_unit(uc, e->args[0]);
    b = expr_unit(uc, e->args[1]);
    switch (e->op) {
    case OP_ADD: return agree(uc, a, b, e->loc, "operands of '+'");
    case OP_SUB: return agree(uc, a, b, e->loc, "operands of '-'");
    case OP_MUL:
      if (a.kind == UNIT_ANY || b.kind == UNIT_ANY) return any_unit();
      if (a.kind == UNIT_TRANSFORM && b.kind == UNIT_TRANSFORM) {
        Unit r = agree(uc, unit_strip_rad(a), unit_strip_rad(b), e->loc, "translations of transforms");
        return r;
      }
      if (a.kind != UNIT_KNOWN || b.kind != UNIT_KNOWN) return unknown_unit();
      return unit_mul(a, b);
    case OP_DIV:
      if (a.kind == UNIT_ANY) return a;
      if (a.kind != UNIT_KNOWN || b.kind != UNIT_KNOWN) return unknown_unit();
      return unit_div(a, b);
    default: assert(0); return unknown_unit();
    }
  case EX_RATE:
    a = expr_unit(uc, e->args[0]);
    if (a.kind != UNIT_KNOWN) return a.kind == UNIT_ANY ? a : unknown_unit();
    return unit_div(a, unit_base(U_S));
  case EX_CALL: return call_unit(uc, e);
  case EX_INDEX:
    a = expr_unit(uc, e->args[0]);
    return a.kind == UNIT_TRANSFORM ? unknown_unit() : a;
  case EX_LIST:
    a = any_unit();
    for (int i = 0; i < e->nargs; i++)
      a = agree(uc, a, expr_unit(uc, e->args[i]), e->args[i]->loc,
                "entries of a vector or matrix");
    return a;
  }
  assert(0);
  return unknown_unit();
}

/* Report when `e` does not have unit `want`; `what` names the term,
** `expect` describes the wanted unit in words. */
static void expect_unit(UnitCheck *uc, const Expr *e, Unit want, SrcLoc loc, const char *what,
                        const char *expect) {
  char s[96];
  Unit u = expr_unit(uc, e);
  if (u.kind != UNIT_KNOWN || want.kind != UNIT_KNOWN || unit_same(u, want)) return;
  uc->nerrors++;
  diag_error(uc->d, loc, "%s has unit %s, expected %s", what, unit_format(u, 0, s, sizeof s), expect);
}

/* Does `e` name anything (so a bare constant default needs no unit)? */
static int mentions_names(const Expr *e) {
  if (e->kind == EX_NAME) return 1;
  for (int i = 0; i < e->nargs; i++)
    if (mentions_names(e->args[i])) return 1;
  return 0;
}

/* A declared value against its declared unit; without a unit the value is
** still walked, so that its sums and function arguments are checked. */
static void check_decl_value(UnitCheck *uc, Decl *dc, const char *kind) {
  char what[160], want[120];
  if (!dc->value || !mentions_names(dc->value)) return;
  if (!dc->unit || !dc->dim) {
    expr_unit(uc, dc->value);
    return;
  }
  snprintf(what, sizeof what, "value of %s '%s'", kind, dc->name);
  snprintf(want, sizeof want, "%s as declared", unit_format(*dc->dim, 0, (char[96]){0}, 96));
  expect_unit(uc, dc->value, *dc->dim, dc->loc, what, want);
}

/* `constraint LEFT = RIGHT [UNIT]`: the sides agree; with the annotation
** they are in UNIT, and a side that is a bare number is read in UNIT (as
** in `param L = 0.1 [m]`).  Without it a bare number is dimensionless, and
** the error says how to give it the other side's unit. */
static void check_constraint(UnitCheck *uc, const Stmt *s) {
  char su[96], sn[64];
  const Expr *side[2] = {s->e[0], s->e[1]};
  if (s->e[2]) {
    Unit want;
    if (unit_parse(s->e[2], uc->d, &want) != 0) {
      uc->nerrors++;
      return;
    }
    for (int k = 0; k < 2; k++)
      if (mentions_names(side[k]))
        expect_unit(uc, side[k], want, side[k]->loc,
                    k ? "right side of the constraint" : "left side of the constraint",
                    unit_format(want, 1, su, sizeof su));
    return;
  }
  Unit u[2] = {expr_unit(uc, side[0]), expr_unit(uc, side[1])};
  for (int k = 0; k < 2; k++) {
    const Expr *num = side[k];
    Unit other = u[1 - k];
    if (num->kind != EX_NUM || other.kind != UNIT_KNOWN || unit_is_dimensionless(other) ||
        num->num == 0)
      continue;
    unit_format(other, 1, su, sizeof su);
    snprintf(sn, sizeof sn, "%.15g", num->num);
    uerror(uc, s->loc,
           "sides of the constraint have different units: %s and 1 (a bare number is "
           "dimensionless; write the constraint's unit after it: %s [%s])",
           unit_format(unit_strip_rad(other), 0, (char[96]){0}, 96), sn, su);
    return;
  }
  agree(uc, u[0], u[1], s->loc, "sides of the constraint");
}

static void check_statement(UnitCheck *uc, Model *m, Stmt *s) {
  const Unit energy = unit_kms(1, 2, -2), power = unit_kms(1, 2, -3), force = unit_kms(1, 1, -2);
  const Unit length = unit_base(U_M), mass = unit_base(U_KG);
  const char *const energy_words = "an energy (J = kg*m^2/s^2)";
  char what[160], want[160], s1[96];
  switch (s->kind) {
  case ST_KINETIC: case ST_POTENTIAL: case ST_LAGRANGIAN:
    snprintf(what, sizeof what, "%s term", ast_stmt_keyword(s->kind));
    expect_unit(uc, s->e[0], energy, s->loc, what, energy_words);
    break;
  case ST_DISSIPATION:
    expect_unit(uc, s->e[0], power, s->loc, "dissipation term", "a power (W = kg*m^2/s^3)");
    break;
  case ST_FORCE: {
    Decl *q = s->target;
    assert(q && q->kind == DECL_COORD && q->dim);
    Unit want_u = unit_div(energy, *q->dim);
    snprintf(what, sizeof what, "force on '%s'", s->name);
    if (unit_is_dimensionless(*q->dim) && q->dim->exp[U_RAD] != 0)
      snprintf(want, sizeof want, "a torque (N*m) for the angle '%s'", s->name);
    else if (unit_is_dimensionless(*q->dim))
      snprintf(want, sizeof want, "an energy (J) for the dimensionless '%s'", s->name);
    else if (unit_same(*q->dim, length))
      snprintf(want, sizeof want, "a force (N) for the length '%s'", s->name);
    else
      snprintf(want, sizeof want, "%s (energy per %s of '%s')", unit_format(want_u, 0, s1, sizeof s1),
               unit_format(*q->dim, 1, (char[96]){0}, 96), s->name);
    expect_unit(uc, s->e[0], want_u, s->loc, what, want);
    break;
  }
  case ST_FORCE_AT:
    expect_unit(uc, s->e[0], force, s->loc, "applied force", "a force (N = kg*m/s^2)");
    expect_unit(uc, s->e[1], length, s->e[1]->loc, "point of application", "a position (m)");
    break;
  case ST_TORQUE:
    expect_unit(uc, s->e[0], energy, s->loc, "torque", "a torque (N*m)");
    expect_unit(uc, s->e[1], unit_dimensionless(), s->e[1]->loc, "orientation", "a rotation (1)");
    break;
  case ST_GRAVITY:
    expect_unit(uc, s->e[0], unit_kms(0, 1, -2), s->loc, "gravity", "an acceleration (m/s^2)");
    break;
  case ST_BODY:
    snprintf(what, sizeof what, "mass of body '%s'", s->decls[0]->name);
    expect_unit(uc, s->e[0], mass, s->e[0]->loc, what, "a mass (kg)");
    snprintf(what, sizeof what, "position of body '%s'", s->decls[0]->name);
    expect_unit(uc, s->e[1], length, s->e[1]->loc, what, "a position (m)");
    if (s->e[2]) expect_unit(uc, s->e[2], unit_dimensionless(), s->e[2]->loc, "orientation", "a rotation (1)");
    if (s->e[3]) {
      snprintf(what, sizeof what, "inertia of body '%s'", s->decls[0]->name);
      expect_unit(uc, s->e[3], unit_kms(1, 2, 0), s->e[3]->loc, what, "kg*m^2");
    }
    break;
  case ST_CONSTRAINT:
    check_constraint(uc, s);
    break;
  case ST_STOP:
    agree(uc, expr_unit(uc, s->e[0]), expr_unit(uc, s->e[1]), s->loc, "sides of the stop");
    if (s->e[2])
      expect_unit(uc, s->e[2], unit_dimensionless(), s->e[2]->loc, "bounce", "dimensionless (1)");
    break;
  case ST_PARAM: check_decl_value(uc, s->decls[0], "param"); break;
  case ST_CONST: check_decl_value(uc, s->decls[0], "const"); break;
  case ST_OUTPUT: check_decl_value(uc, s->decls[0], "output"); break;
  case ST_FRAME: {
    /* a transform's translation is a length (its rotation is dimensionless) */
    Unit u = expr_unit(uc, s->decls[0]->value);
    if (u.kind == UNIT_TRANSFORM) {
      u.kind = UNIT_KNOWN;
      if (!unit_same(unit_strip_rad(u), unit_base(U_M)))
        uerror(uc, s->decls[0]->value->loc, "the translation of frame '%s' must be a length (m), not %s",
               s->decls[0]->name, unit_format(u, 0, (char[96]){0}, 96));
    }
    break;
  }
  case ST_LET: {
    Decl *dc = s->decls[0];
    if (dc->unit) {  /* a let with a declared unit */
      check_decl_value(uc, dc, "let");
    } else {
      Unit *u = arena_alloc(m->ast->arena, sizeof *u);
      *u = expr_unit(uc, dc->value);
      dc->dim = u;
    }
    break;
  }
  case ST_INITIAL: {
    Decl *q = s->target;
    assert(q && (q->kind == DECL_COORD || q->kind == DECL_ATTITUDE) && q->dim);
    if (!mentions_names(s->e[0])) break;
    if (q->kind == DECL_ATTITUDE) {
      if (s->omega)
        expect_unit(uc, s->e[0], unit_div(unit_base(U_RAD), unit_base(U_S)), s->loc,
                    "initial angular velocity", "rad/s");
      else
        expect_unit(uc, s->e[0], unit_dimensionless(), s->loc, "initial rotation", "a dimensionless rotation");
      break;
    }
    Unit want_u = s->rate ? unit_div(*q->dim, unit_base(U_S)) : *q->dim;
    snprintf(what, sizeof what, "initial value of %s%s", s->name, s->rate ? "'" : "");
    snprintf(want, sizeof want, "%s", unit_format(want_u, 1, s1, sizeof s1));
    expect_unit(uc, s->e[0], want_u, s->loc, what, want);
    break;
  }
  default: break;
  }
}

int units_check_model(Model *m, Diag *d) {
  UnitCheck uc = {d, 0};
  int with = 0, without = 0;
  Decl **lists[2] = {m->coords, m->params};
  int counts[2] = {m->ncoords, m->nparams};
  const char *kinds[2] = {"coordinate", "param"};
  for (int k = 0; k < 2; k++)
    for (int i = 0; i < counts[k]; i++) {
      if (lists[k][i]->dim) with++;
      else without++;
    }
  m->has_units = 0;
  if (with == 0) return 0;
  if (without > 0) {
    for (int k = 0; k < 2; k++)
      for (int i = 0; i < counts[k]; i++)
        if (!lists[k][i]->dim)
          diag_warning(d, lists[k][i]->loc,
                       "%s '%s' has no unit: units are checked only when every coordinate "
                       "and param has one", kinds[k], lists[k][i]->name);
    return 0;
  }
  m->has_units = 1;
  for (int i = 0; i < m->ninputs; i++)
    if (!m->inputs[i]->dim)
      diag_warning(d, m->inputs[i]->loc, "input '%s' has no unit: terms that use it are not unit-checked",
                   m->inputs[i]->name);
  for (int i = 0; i < m->nconsts; i++)
    if (!m->consts[i]->dim)
      diag_warning(d, m->consts[i]->loc, "const '%s' has no unit: terms that use it are not unit-checked",
                   m->consts[i]->name);
  for (int i = 0; i < m->ast->nstmts; i++) check_statement(&uc, m, m->ast->stmts[i]);
  return uc.nerrors;
}

/* The unit of a constraint statement's equations phi = LEFT - RIGHT
** (velocity constraints: of A q' - b), in a unit-checked model. */
int units_of_constraint(const Stmt *s, Unit *u) {
  assert(s && s->kind == ST_CONSTRAINT && u);
  Diag scratch;
  diag_init(&scratch, "", "", 0);
  UnitCheck uc = {&scratch, 0};
  int rc = -1;
  if (s->e[2]) {
    rc = unit_parse(s->e[2], &scratch, u) == 0 ? 0 : -1;
  } else {
    for (int k = 0; k < 2 && rc != 0; k++) {
      Unit side = expr_unit(&uc, s->e[k]);
      if (side.kind == UNIT_KNOWN && (mentions_names(s->e[k]) || k == 1)) {
        *u = side;
        rc = 0;
      }
    }
  }
  diag_free(&scratch);
  return rc;
}

/* The unit of the multiplier of a constraint whose equation has unit phi:
** its generalized force +G^T lambda does work, so lambda = J / phi; for a
** velocity constraint (phi a rate), W / phi. */
Unit units_of_multiplier(Unit phi, int velocity) {
  return unit_div(velocity ? unit_kms(1, 2, -3) : unit_kms(1, 2, -2), phi);
}
