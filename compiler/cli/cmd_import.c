/*
** cmd_import.c — `eomc import ROBOT.urdf [-o MODEL.eom]`: write a robot
** description (URDF, read by front/urdf.c) as a readable model.
**
** The model has one coordinate per moving joint, named after it (an angle
** for revolute and continuous joints, a length for prismatic ones), one
** input per joint that drives it, a parameter per link mass, the joint
** damping as a dissipation term, standard gravity along -z (URDF carries
** none), and a `frame` for every link at the end of a chain (the tools).
** Each link's frame is written as its rotation R_link (link axes to
** world) and its origin p_link, built joint by joint as products of
** rotx/roty/rotz and sums of rotated offsets:
**   R_child = R_parent * Rorigin * Rjoint(q),  p_child = p_parent + R_parent * xyz
** which is the form the compiler's chain route recognises (the bodies
** then get the recursive, link-frame dynamics).  The root link's axes are
** the world's; bodies welded to it do not move and are left out.
*/
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cmd.h"
#include "emit/fsutil.h"
#include "front/check.h"
#include "front/diag.h"
#include "front/source.h"
#include "cli/urdf.h"

static const char import_usage[] =
  "usage: eomc import ROBOT.urdf [-o MODEL.eom]\n"
  "\n"
  "Read a robot description in URDF and write it as a model: one coordinate\n"
  "per moving joint (named after it), one input per drive, the links as\n"
  "bodies with their masses, mass centres and inertias, joint damping,\n"
  "gravity along -z, and a frame output for every link at the end of a\n"
  "chain.  Joint limits are written as comments.\n"
  "\n"
  "options:\n"
  "  -o MODEL.eom   write the model there (default: standard output)\n"
  "\n"
  "exit status: 0 success, 1 error in the description, 2 usage error\n";

/* The model text being written (a growing buffer). */
typedef struct Out {
  char *s;
  size_t len, cap;
  int oom;
} Out;

static void put(Out *o, const char *fmt, ...) DIAG_PRINTF(2, 3);
static void put(Out *o, const char *fmt, ...) {
  va_list ap;
  for (;;) {
    va_start(ap, fmt);
    int n = vsnprintf(o->s ? o->s + o->len : NULL, o->s ? o->cap - o->len : 0, fmt, ap);
    va_end(ap);
    if (n < 0) {
      o->oom = 1;
      return;
    }
    if (o->s && o->len + (size_t)n < o->cap) {
      o->len += (size_t)n;
      return;
    }
    size_t cap = 2 * (o->cap + (size_t)n) + 256;
    char *s = realloc(o->s, cap);
    if (!s) {
      o->oom = 1;
      return;
    }
    o->s = s, o->cap = cap;
  }
}

/* The shortest of %.15g and %.17g that reads back as v; -0 as 0. */
static const char *num(double v, char *buf) {
  if (v == 0) return strcpy(buf, "0");
  snprintf(buf, 32, "%.15g", v);
  if (strtod(buf, NULL) != v) snprintf(buf, 32, "%.17g", v);
  return buf;
}
#define NUM(v) num((v), (char[32]){0})

/* ------------------------------------------------------------------ names */

typedef struct Names {
  char **v;
  int n, cap;
} Names;

static int taken(const Names *ns, const char *s) {
  if (check_is_keyword(s) || check_builtin_arity(s) != -2 || strcmp(s, "t") == 0 ||
      strcmp(s, "pi") == 0)
    return 1;
  for (int i = 0; i < ns->n; i++)
    if (strcmp(ns->v[i], s) == 0) return 1;
  return 0;
}

/* A model identifier from prefix + URDF name, unique among those given so
** far (malloc'd and kept in ns; NULL when out of memory). */
static const char *ident(Names *ns, const char *prefix, const char *name) {
  size_t n = strlen(prefix) + strlen(name) + 16;
  char *s = malloc(n);
  if (!s) return NULL;
  size_t k = 0;
  for (const char *c = prefix; *c; c++) s[k++] = *c;
  if (!*prefix && !(name[0] == '_' || (name[0] >= 'A' && name[0] <= 'Z') ||
                    (name[0] >= 'a' && name[0] <= 'z')))
    s[k++] = 'n';  /* names must start with a letter or _ */
  for (const char *c = name; *c; c++) {
    int ok = *c == '_' || (*c >= 'A' && *c <= 'Z') || (*c >= 'a' && *c <= 'z') ||
             (*c >= '0' && *c <= '9');
    s[k++] = ok ? *c : '_';
  }
  s[k] = '\0';
  for (int suffix = 2; taken(ns, s); suffix++) snprintf(s + k, 16, "_%d", suffix);
  if (ns->n == ns->cap) {
    int cap = ns->cap ? 2 * ns->cap : 32;
    char **v = realloc(ns->v, (size_t)cap * sizeof *v);
    if (!v) {
      free(s);
      return NULL;
    }
    ns->v = v, ns->cap = cap;
  }
  return ns->v[ns->n++] = s;
}

static void names_free(Names *ns) {
  for (int i = 0; i < ns->n; i++) free(ns->v[i]);
  free(ns->v);
}

/* ------------------------------------------------------------ the model */

/* Identifiers of every joint and link, made once in a fixed order so the
** same description always gives the same text. */
typedef struct Idents {
  const char **coord, **input, **damping;  /* per joint (NULL for fixed) */
  const char **R, **p, **body, **mass, **inertia, **frame;  /* per link */
} Idents;

static int is_moving(const UrdfJoint *j) { return j->kind != URDF_FIXED; }

/* Does link i move (a moving joint between it and the root)? */
static int link_moves(const UrdfRobot *r, int i) {
  while (r->links[i].parent_joint >= 0) {
    const UrdfJoint *j = &r->joints[r->links[i].parent_joint];
    if (is_moving(j)) return 1;
    i = j->parent_link;
  }
  return 0;
}

static int is_leaf(const UrdfRobot *r, int i) {
  for (int k = 0; k < r->njoints; k++)
    if (r->joints[k].parent_link == i) return 0;
  return 1;
}

/* An angle as written: a whole multiple of a quarter turn that the
** description can only give to double precision (1.5707963267948966) is
** written as that multiple of pi, so its sines and cosines are exact and
** the derivation drops the terms they zero; any other angle as its
** number.  Within 1e-12 rad, far below what a drawing can mean. */
static const char *angle(double a, char *buf) {
  static const double quarter = 1.57079632679489661923;
  static const char *const quarters[] = {"-pi", "-pi/2", "", "pi/2", "pi"};
  double k = nearbyint(a / quarter);
  if (k != 0 && fabs(k) <= 2 && fabs(a - k * quarter) <= 1e-12)
    return strcpy(buf, quarters[(int)k + 2]);
  return num(a, buf);
}

/* "*rotz(y)*roty(p)*rotx(r)" for the nonzero angles of rpy (URDF's fixed
** axes roll, pitch, yaw: R = Rz(yaw) Ry(pitch) Rx(roll)). */
static void put_rpy(Out *o, const double rpy[3]) {
  static const char axes[] = "xyz";
  for (int k = 2; k >= 0; k--)
    if (rpy[k] != 0) put(o, "*rot%c(%s)", axes[k], angle(rpy[k], (char[32]){0}));
}

/* "*R(axis, q)": a coordinate axis directly, any other through the turn
** that takes z onto the axis. */
static void put_axis_turn(Out *o, const double a[3], const char *q) {
  static const char axes[] = "xyz";
  for (int k = 0; k < 3; k++)
    if (fabs(fabs(a[k]) - 1) < 1e-12) {
      put(o, "*rot%c(%s%s)", axes[k], a[k] < 0 ? "-" : "", q);
      return;
    }
  double th = acos(fmax(-1.0, fmin(1.0, a[2]))), ph = atan2(a[1], a[0]);
  put(o, "*rotz(%s)*roty(%s)*rotz(%s)*roty(%s)*rotz(%s)", NUM(ph), NUM(th), q, NUM(-th), NUM(-ph));
}

static void put_header(Out *o, const UrdfRobot *r, const char *path, const char *model) {
  put(o, "# %s — imported from %s by eomc import.\n", model, path);
  put(o, "#\n# Links %d, joints %d (root link '%s').  Every moving joint is a coordinate\n"
         "# named after it, driven by an input; the links are bodies on chains of\n"
         "# frames: R_<link> turns the link's axes to the world's, p_<link> is its\n"
         "# origin.  Gravity is standard gravity along -z.\n#\n",
      r->nlinks, r->njoints, r->links[r->root].name);
  put(o, "# The generated code is an engineering aid for simulation and control\n"
         "# design, not a safety certification: a real machine needs its own risk\n"
         "# assessment and safety functions under the local codes.\n\n");
  put(o, "model %s\n\n", model);
}

static void put_joint_decls(Out *o, const UrdfRobot *r, const Idents *id) {
  for (int i = 0; i < r->njoints; i++) {
    const UrdfJoint *j = &r->joints[i];
    if (!is_moving(j)) continue;
    const char *unit = j->kind == URDF_PRISMATIC ? "m" : "rad";
    if (j->has_limit && j->kind != URDF_CONTINUOUS)
      put(o, "# limits of %s: %s .. %s %s", j->name, NUM(j->lower), NUM(j->upper), unit);
    else
      put(o, "# %s: no position limits", j->name);
    if (j->has_limit) put(o, ", effort %s, velocity %s", NUM(j->effort), NUM(j->velocity));
    if (j->friction != 0) put(o, "; friction %s (not modelled)", NUM(j->friction));
    put(o, "\ncoord %s \"%s joint %s, %s to %s\"\n", id->coord[i], urdf_kind_name(j->kind),
        j->name, j->parent, j->child);
  }
  put(o, "\n");
  for (int i = 0; i < r->njoints; i++)
    if (is_moving(&r->joints[i]))
      put(o, "input %s \"drive of %s (%s)\"\n", id->input[i], r->joints[i].name,
          r->joints[i].kind == URDF_PRISMATIC ? "force, N" : "torque, N*m");
  put(o, "\nparam g = 9.81 \"gravitational acceleration, m/s^2 (standard gravity)\"\n");
  for (int i = 0; i < r->njoints; i++)
    if (id->damping[i])
      put(o, "param %s = %s \"damping of %s\"\n", id->damping[i], NUM(r->joints[i].damping),
          r->joints[i].name);
  for (int i = 0; i < r->nlinks; i++)
    if (id->mass[i])
      put(o, "param %s = %s \"mass of %s, kg\"\n", id->mass[i], NUM(r->links[i].inertial.mass),
          r->links[i].name);
}

/* The lets of link `i`'s frame, after its parent's (depth first). */
static void put_frames(Out *o, const UrdfRobot *r, const Idents *id, int i) {
  const UrdfLink *l = &r->links[i];
  if (l->parent_joint < 0) {
    put(o, "\n# %s: the root link; its axes and origin are the world's\n", l->name);
    put(o, "let %s = rotz(0)\n", id->R[i]);
  } else {
    const UrdfJoint *j = &r->joints[l->parent_joint];
    int pl = j->parent_link, root = r->links[pl].parent_joint < 0;
    put(o, "\n# joint %s (%s): %s -> %s\n", j->name, urdf_kind_name(j->kind), j->parent, j->child);
    put(o, "let %s = %s", id->R[i], id->R[pl]);
    put_rpy(o, j->rpy);
    if (j->kind == URDF_REVOLUTE || j->kind == URDF_CONTINUOUS)
      put_axis_turn(o, j->axis, id->coord[l->parent_joint]);
    put(o, "\nlet %s = ", id->p[i]);
    if (!root) put(o, "%s + ", id->p[pl]);
    put(o, "%s*[%s, %s, %s]", id->R[pl], NUM(j->xyz[0]), NUM(j->xyz[1]), NUM(j->xyz[2]));
    if (j->kind == URDF_PRISMATIC) {
      const char *q = id->coord[l->parent_joint];
      put(o, " + %s", id->R[pl]);
      put_rpy(o, j->rpy);
      put(o, "*[");
      for (int k = 0; k < 3; k++) {
        double a = j->axis[k];
        if (a == 0) put(o, "%s0", k ? ", " : "");
        else if (a == 1) put(o, "%s%s", k ? ", " : "", q);
        else if (a == -1) put(o, "%s-%s", k ? ", " : "", q);
        else put(o, "%s%s*%s", k ? ", " : "", NUM(a), q);
      }
      put(o, "]");
    }
    put(o, "\n");
  }
  for (int k = 0; k < r->njoints; k++)
    if (r->joints[k].parent_link == i) put_frames(o, r, id, r->joints[k].child_link);
}

static void put_bodies(Out *o, const UrdfRobot *r, const Idents *id) {
  put(o, "\n# the links' masses, mass centres and inertias (about the mass centre, in\n"
         "# the inertial axes), as the description gives them\n");
  for (int i = 0; i < r->nlinks; i++) {
    const UrdfLink *l = &r->links[i];
    const UrdfInertial *in = &l->inertial;
    if (!id->mass[i]) {
      put(o, "# %s: %s\n", l->name,
          !in->present || in->mass == 0 ? "no mass" : "welded to the root: it does not move");
      continue;
    }
    int root = l->parent_joint < 0;
    int point = in->ixx == 0 && in->ixy == 0 && in->ixz == 0 && in->iyy == 0 && in->iyz == 0 &&
                in->izz == 0;
    if (point) {  /* a zero inertia is a point mass (a payload, a tool's tip) */
      put(o, "# %s: a point mass (its inertia is zero)\nbody %s mass %s at ", l->name, id->body[i],
          id->mass[i]);
      if (!root) put(o, "%s + ", id->p[i]);
      put(o, "%s*[%s, %s, %s]\n", id->R[i], NUM(in->xyz[0]), NUM(in->xyz[1]), NUM(in->xyz[2]));
      continue;
    }
    put(o, "let %s = [[%s, %s, %s], [%s, %s, %s], [%s, %s, %s]]\n", id->inertia[i], NUM(in->ixx),
        NUM(in->ixy), NUM(in->ixz), NUM(in->ixy), NUM(in->iyy), NUM(in->iyz), NUM(in->ixz),
        NUM(in->iyz), NUM(in->izz));
    put(o, "body %s mass %s at ", id->body[i], id->mass[i]);
    if (!root) put(o, "%s + ", id->p[i]);
    put(o, "%s*[%s, %s, %s] orient %s", id->R[i], NUM(in->xyz[0]), NUM(in->xyz[1]),
        NUM(in->xyz[2]), id->R[i]);
    put_rpy(o, in->rpy);
    put(o, " inertia %s\n", id->inertia[i]);
  }
}

static void put_dynamics(Out *o, const UrdfRobot *r, const Idents *id) {
  put(o, "\ngravity [0, 0, -g]\n");
  int any = 0;
  for (int i = 0; i < r->njoints; i++)
    if (id->damping[i]) {
      put(o, "%s1/2*%s*%s'^2", any ? " + " : "dissipation ", id->damping[i], id->coord[i]);
      any = 1;
    }
  if (any) put(o, "\n");
  put(o, "\n");
  for (int i = 0; i < r->njoints; i++)
    if (is_moving(&r->joints[i])) put(o, "force %s = %s\n", id->coord[i], id->input[i]);
  for (int i = 0; i < r->nlinks; i++) {
    if (!id->frame[i]) continue;
    const char *R = id->R[i], *p = id->p[i];
    put(o, "\nframe %s = [[%s[1,1], %s[1,2], %s[1,3], %s[1]],\n", id->frame[i], R, R, R, p);
    put(o, "  [%s[2,1], %s[2,2], %s[2,3], %s[2]],\n", R, R, R, p);
    put(o, "  [%s[3,1], %s[3,2], %s[3,3], %s[3]],\n", R, R, R, p);
    put(o, "  [0, 0, 0, 1]] \"frame of %s\"\n", r->links[i].name);
  }
}

/* Make every identifier; 0 or -1 when out of memory. */
static int make_idents(const UrdfRobot *r, Names *ns, Idents *id, const char **model,
                       const char *stem) {
  int nj = r->njoints, nl = r->nlinks, ok = 1;
  const char **all = calloc((size_t)(3 * nj + 7 * nl) + 1, sizeof *all);
  if (!all) return -1;
  id->coord = all, id->input = all + nj, id->damping = all + 2 * nj;
  id->R = all + 3 * nj, id->p = id->R + nl, id->body = id->p + nl, id->mass = id->body + nl;
  id->inertia = id->mass + nl;
  id->frame = id->inertia + nl;
  *model = ident(ns, "", r->name && *r->name ? r->name : stem);
  ok = *model != NULL;
  for (int i = 0; i < nj && ok; i++) {
    const UrdfJoint *j = &r->joints[i];
    if (!is_moving(j)) continue;
    ok = (id->coord[i] = ident(ns, "", j->name)) && (id->input[i] = ident(ns, "tau_", j->name));
    if (ok && j->damping > 0) ok = (id->damping[i] = ident(ns, "b_", j->name)) != NULL;
  }
  for (int i = 0; i < nl && ok; i++) {
    const UrdfLink *l = &r->links[i];
    int moves = link_moves(r, i);
    ok = (id->R[i] = ident(ns, "R_", l->name)) && (id->p[i] = ident(ns, "p_", l->name));
    if (ok && moves && l->inertial.present && l->inertial.mass > 0)
      ok = (id->body[i] = ident(ns, "", l->name)) && (id->mass[i] = ident(ns, "m_", l->name)) &&
           (id->inertia[i] = ident(ns, "I_", l->name));
    if (ok && moves && is_leaf(r, i)) {
      char *fn = malloc(strlen(l->name) + 8);
      ok = fn != NULL;
      if (ok) {
        sprintf(fn, "%s_frame", l->name);
        ok = (id->frame[i] = ident(ns, "", fn)) != NULL;
        free(fn);
      }
    }
  }
  return ok ? 0 : -1;
}

/* The model text of r into o; 0 or -1 when out of memory. */
static int write_model(const UrdfRobot *r, const char *path, Out *o) {
  Names ns = {0};
  Idents id;
  const char *model = NULL;
  memset(&id, 0, sizeof id);
  /* the stem of the file name, as the model's default name */
  const char *base = strrchr(path, '/') ? strrchr(path, '/') + 1 : path;
  char stem[256];
  snprintf(stem, sizeof stem, "%s", base);
  if (strchr(stem, '.')) *strchr(stem, '.') = '\0';
  if (!stem[0]) strcpy(stem, "robot");
  int rc = make_idents(r, &ns, &id, &model, stem);
  if (rc == 0) {
    put_header(o, r, base, model);
    put_joint_decls(o, r, &id);
    put_frames(o, r, &id, r->root);
    put_bodies(o, r, &id);
    put_dynamics(o, r, &id);
    rc = o->oom ? -1 : 0;
  }
  free((void *)id.coord);
  names_free(&ns);
  return rc;
}

/* Write text to `out` (temporary and rename), or to stdout when NULL. */
static int save(const char *out, const Out *o) {
  char err[512];
  if (!out) {
    fwrite(o->s, 1, o->len, stdout);
    return fflush(stdout) == 0 ? 0 : EXIT_RUN;
  }
  const char *slash = strrchr(out, '/');
  char dir[1024];
  if (slash) snprintf(dir, sizeof dir, "%.*s", (int)(slash - out), out);
  else strcpy(dir, ".");
  if (!dir[0]) strcpy(dir, "/");
  if (fs_write_if_changed(dir, slash ? slash + 1 : out, o->s, o->len, NULL, err, sizeof err) != 0) {
    fprintf(stderr, "eomc import: cannot write %s: %s\n", out, err);
    return EXIT_RUN;
  }
  return 0;
}

int cmd_import(int argc, char **argv) {
  const char *in = NULL, *out = NULL;
  for (int i = 1; i < argc; i++) {
    const char *arg = argv[i];
    if (cmd_is_help(arg)) {
      fputs(import_usage, stdout);
      return 0;
    } else if (strcmp(arg, "-o") == 0) {
      if (i + 1 >= argc) {
        fputs("eomc import: option '-o' needs a file name (try 'eomc import --help')\n", stderr);
        return EXIT_USAGE;
      }
      out = argv[++i];
    } else if (arg[0] == '-' && arg[1] != '\0') {
      fprintf(stderr, "eomc import: unknown option '%s' (try 'eomc import --help')\n", arg);
      return EXIT_USAGE;
    } else if (in) {
      fprintf(stderr, "eomc import: more than one description file ('%s')\n", arg);
      return EXIT_USAGE;
    } else {
      in = arg;
    }
  }
  if (!in) {
    fputs("eomc import: no description file given (try 'eomc import --help')\n", stderr);
    return EXIT_USAGE;
  }
  Source src;
  Diag d;
  UrdfRobot robot;
  Out o = {0};
  diag_init(&d, in, NULL, 0);
  if (source_read(&src, in, &d) != 0) {
    diag_print(&d, stderr);
    diag_free(&d);
    return EXIT_USAGE;
  }
  d.src = src.text; /* now messages can quote their line */
  d.len = src.len;
  int rc = urdf_read(src.text, src.len, &d, &robot) ? EXIT_MODEL : 0;
  if (rc == 0 && write_model(&robot, in, &o) != 0) {
    fputs("eomc import: out of memory\n", stderr);
    rc = EXIT_RUN;
  }
  diag_print(&d, stderr);
  if (rc == 0) rc = save(out, &o);
  free(o.s);
  urdf_free(&robot);
  diag_free(&d);
  source_free(&src);
  return rc;
}
