/*
** urdf.c — the URDF reader behind `eomc import` (see urdf.h).
**
** Expat (Debian's libexpat1-dev) does the XML: it is small, well kept and
** streaming, and it gives the line and column of every start tag and of
** every syntax error, which is all the errors here need.  The handlers
** below keep a stack of what each open element is and fill the structs;
** check_tree() then resolves names and checks that the links form one
** tree.
*/
#include <assert.h>
#include <expat.h>
#include <limits.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/urdf.h"

/* What an open element is, for its children. */
typedef enum Ctx { C_NONE, C_ROBOT, C_LINK, C_INERTIAL, C_JOINT, C_LEAF, C_SKIP } Ctx;

#define MAX_DEPTH 256

static const SrcLoc NOWHERE = {0, 0}, FIRST_LINE = {1, 1};

typedef struct Reader {
  XML_Parser xp;
  Diag *d;
  UrdfRobot *r;
  Ctx stack[MAX_DEPTH];
  int depth;            /* open elements */
  int seen_robot;
  int too_deep;         /* reported once */
  int oom;
} Reader;

const char *urdf_kind_name(UrdfJointKind k) {
  switch (k) {
  case URDF_REVOLUTE: return "revolute";
  case URDF_CONTINUOUS: return "continuous";
  case URDF_PRISMATIC: return "prismatic";
  case URDF_FIXED: return "fixed";
  }
  return "?";
}

static SrcLoc here(const Reader *rd) {
  SrcLoc l;
  l.line = (int)XML_GetCurrentLineNumber(rd->xp);
  l.col = (int)XML_GetCurrentColumnNumber(rd->xp) + 1;
  return l;
}

static const char *attr(const XML_Char **atts, const char *name) {
  for (int i = 0; atts[i]; i += 2)
    if (strcmp(atts[i], name) == 0) return atts[i + 1];
  return NULL;
}

static char *dup(Reader *rd, const char *s) {
  char *c = malloc(strlen(s) + 1);
  if (!c) {
    rd->oom = 1;
    return NULL;
  }
  return strcpy(c, s);
}

/* Up to n numbers separated by blanks, all of them finite; 0 or -1. */
static int parse_numbers(const char *s, double *v, int n) {
  char *end;
  for (int i = 0; i < n; i++) {
    v[i] = strtod(s, &end);
    if (end == s || !isfinite(v[i])) return -1;
    s = end;
  }
  while (*s == ' ' || *s == '\t' || *s == '\n' || *s == '\r') s++;
  return *s ? -1 : 0;
}

/* Attribute `name` of <elem> as n numbers into v; absent: v keeps its
** default, unless required. */
static void numbers_attr(Reader *rd, SrcLoc loc, const char *elem, const XML_Char **atts,
                         const char *name, double *v, int n, int required) {
  const char *s = attr(atts, name);
  if (!s) {
    if (required) diag_error(rd->d, loc, "<%s> needs the attribute '%s'", elem, name);
    return;
  }
  if (parse_numbers(s, v, n) != 0)
    diag_error(rd->d, loc, "<%s %s=\"%s\">: expected %d finite number%s", elem, name, s, n,
               n == 1 ? "" : "s separated by blanks");
}

/* A required name attribute, copied; NULL after an error. */
static char *name_attr(Reader *rd, SrcLoc loc, const char *elem, const XML_Char **atts,
                       const char *name) {
  const char *s = attr(atts, name);
  if (!s || !*s) {
    diag_error(rd->d, loc, "<%s> needs a non-empty '%s' attribute", elem, name);
    return NULL;
  }
  return dup(rd, s);
}

static void *grow(Reader *rd, void *arr, int n, size_t size) {
  void *p = realloc(arr, (size_t)(n + 1) * size);
  if (!p) rd->oom = 1;
  return p;
}

static Ctx start_link(Reader *rd, SrcLoc loc, const XML_Char **atts) {
  UrdfLink *links = grow(rd, rd->r->links, rd->r->nlinks, sizeof *links);
  if (!links) return C_SKIP;
  rd->r->links = links;
  UrdfLink *l = &links[rd->r->nlinks++];
  memset(l, 0, sizeof *l);
  l->loc = loc;
  l->parent_joint = -1;
  l->name = name_attr(rd, loc, "link", atts, "name");
  return C_LINK;
}

static Ctx start_joint(Reader *rd, SrcLoc loc, const XML_Char **atts) {
  static const char *const kinds[] = {"revolute", "continuous", "prismatic", "fixed"};
  UrdfJoint *joints = grow(rd, rd->r->joints, rd->r->njoints, sizeof *joints);
  if (!joints) return C_SKIP;
  rd->r->joints = joints;
  UrdfJoint *j = &joints[rd->r->njoints++];
  memset(j, 0, sizeof *j);
  j->loc = loc;
  j->parent_link = j->child_link = -1;
  j->axis[0] = 1;  /* URDF's default axis */
  j->name = name_attr(rd, loc, "joint", atts, "name");
  const char *type = attr(atts, "type");
  if (!type) {
    diag_error(rd->d, loc, "<joint> needs a 'type' attribute (revolute, continuous, prismatic or fixed)");
    return C_JOINT;
  }
  for (int k = 0; k < 4; k++)
    if (strcmp(type, kinds[k]) == 0) {
      j->kind = (UrdfJointKind)k;
      return C_JOINT;
    }
  diag_error(rd->d, loc, "joint '%s' is of kind '%s', which eomc import does not support "
             "(supported: revolute, continuous, prismatic, fixed)", j->name ? j->name : "?", type);
  return C_JOINT;
}

static Ctx start_in_inertial(Reader *rd, SrcLoc loc, const char *el, const XML_Char **atts) {
  UrdfInertial *in = &rd->r->links[rd->r->nlinks - 1].inertial;
  if (strcmp(el, "origin") == 0) {
    numbers_attr(rd, loc, el, atts, "xyz", in->xyz, 3, 0);
    numbers_attr(rd, loc, el, atts, "rpy", in->rpy, 3, 0);
  } else if (strcmp(el, "mass") == 0) {
    numbers_attr(rd, loc, el, atts, "value", &in->mass, 1, 1);
    if (in->mass < 0) diag_error(rd->d, loc, "a link's mass cannot be negative (%g)", in->mass);
  } else if (strcmp(el, "inertia") == 0) {
    double *v[6] = {&in->ixx, &in->ixy, &in->ixz, &in->iyy, &in->iyz, &in->izz};
    static const char *const names[6] = {"ixx", "ixy", "ixz", "iyy", "iyz", "izz"};
    for (int k = 0; k < 6; k++) numbers_attr(rd, loc, el, atts, names[k], v[k], 1, 1);
  } else {
    diag_error(rd->d, loc, "unsupported element <%s> in <inertial> (expected origin, mass, inertia)", el);
    return C_SKIP;
  }
  return C_LEAF;
}

static Ctx start_in_joint(Reader *rd, SrcLoc loc, const char *el, const XML_Char **atts) {
  UrdfJoint *j = &rd->r->joints[rd->r->njoints - 1];
  if (strcmp(el, "parent") == 0 || strcmp(el, "child") == 0) {
    char **slot = el[0] == 'p' ? &j->parent : &j->child;
    if (*slot) diag_error(rd->d, loc, "joint '%s' has a second <%s>", j->name ? j->name : "?", el);
    else *slot = name_attr(rd, loc, el, atts, "link");
  } else if (strcmp(el, "origin") == 0) {
    numbers_attr(rd, loc, el, atts, "xyz", j->xyz, 3, 0);
    numbers_attr(rd, loc, el, atts, "rpy", j->rpy, 3, 0);
  } else if (strcmp(el, "axis") == 0) {
    numbers_attr(rd, loc, el, atts, "xyz", j->axis, 3, 1);
    double n = sqrt(j->axis[0] * j->axis[0] + j->axis[1] * j->axis[1] + j->axis[2] * j->axis[2]);
    if (!(n > 1e-12)) diag_error(rd->d, loc, "a joint's axis cannot be zero");
    else
      for (int k = 0; k < 3; k++) j->axis[k] /= n;
  } else if (strcmp(el, "limit") == 0) {
    j->has_limit = 1;
    numbers_attr(rd, loc, el, atts, "lower", &j->lower, 1, 0);
    numbers_attr(rd, loc, el, atts, "upper", &j->upper, 1, 0);
    numbers_attr(rd, loc, el, atts, "effort", &j->effort, 1, 0);
    numbers_attr(rd, loc, el, atts, "velocity", &j->velocity, 1, 0);
    if (j->lower > j->upper)
      diag_error(rd->d, loc, "joint limits: lower %g is above upper %g", j->lower, j->upper);
  } else if (strcmp(el, "dynamics") == 0) {
    numbers_attr(rd, loc, el, atts, "damping", &j->damping, 1, 0);
    numbers_attr(rd, loc, el, atts, "friction", &j->friction, 1, 0);
    if (j->damping < 0) diag_error(rd->d, loc, "a joint's damping cannot be negative (%g)", j->damping);
  } else if (strcmp(el, "calibration") == 0 || strcmp(el, "safety_controller") == 0) {
    return C_SKIP;  /* no bearing on the dynamics */
  } else if (strcmp(el, "mimic") == 0) {
    diag_error(rd->d, loc, "joint '%s' mimics another joint: mimic joints are not supported "
               "(write the coupling as a constraint by hand)", j->name ? j->name : "?");
    return C_SKIP;
  } else {
    diag_error(rd->d, loc, "unsupported element <%s> in <joint>", el);
    return C_SKIP;
  }
  return C_LEAF;
}

/* Which child elements each context takes. */
static Ctx child_ctx(Reader *rd, Ctx parent, SrcLoc loc, const char *el, const XML_Char **atts) {
  switch (parent) {
  case C_NONE:
    if (strcmp(el, "robot") != 0) {
      diag_error(rd->d, loc, "not a robot description: the root element is <%s>, not <robot>", el);
      return C_SKIP;
    }
    rd->seen_robot = 1;
    if (attr(atts, "name") && !rd->r->name) rd->r->name = dup(rd, attr(atts, "name"));
    return C_ROBOT;
  case C_ROBOT:
    if (strcmp(el, "link") == 0) return start_link(rd, loc, atts);
    if (strcmp(el, "joint") == 0) return start_joint(rd, loc, atts);
    if (strcmp(el, "material") == 0 || strcmp(el, "transmission") == 0 || strcmp(el, "gazebo") == 0)
      return C_SKIP;  /* looks, drive trains and simulator settings */
    diag_error(rd->d, loc, "unsupported element <%s> in <robot> (expected link or joint)", el);
    return C_SKIP;
  case C_LINK:
    if (strcmp(el, "inertial") == 0) {
      UrdfInertial *in = &rd->r->links[rd->r->nlinks - 1].inertial;
      if (in->present) diag_error(rd->d, loc, "a link has one <inertial> at most");
      in->present = 1;
      in->loc = loc;
      return C_INERTIAL;
    }
    if (strcmp(el, "visual") == 0 || strcmp(el, "collision") == 0) return C_SKIP;
    diag_error(rd->d, loc, "unsupported element <%s> in <link> (expected inertial, visual, collision)", el);
    return C_SKIP;
  case C_INERTIAL: return start_in_inertial(rd, loc, el, atts);
  case C_JOINT: return start_in_joint(rd, loc, el, atts);
  case C_LEAF:
    diag_error(rd->d, loc, "unexpected element <%s>: this element takes no children", el);
    return C_SKIP;
  case C_SKIP: return C_SKIP;
  }
  return C_SKIP;
}

static void XMLCALL on_start(void *ud, const XML_Char *el, const XML_Char **atts) {
  Reader *rd = ud;
  if (rd->depth >= MAX_DEPTH) {
    if (!rd->too_deep) diag_error(rd->d, here(rd), "elements nested deeper than %d", MAX_DEPTH);
    rd->too_deep = 1;
    XML_StopParser(rd->xp, XML_FALSE);
    return;
  }
  Ctx parent = rd->depth ? rd->stack[rd->depth - 1] : C_NONE;
  if (parent == C_NONE && rd->seen_robot) parent = C_SKIP;  /* cannot happen: one root */
  rd->stack[rd->depth++] = child_ctx(rd, parent, here(rd), el, atts);
  if (rd->oom) XML_StopParser(rd->xp, XML_FALSE);
}

static void XMLCALL on_end(void *ud, const XML_Char *el) {
  Reader *rd = ud;
  (void)el;
  assert(rd->depth > 0);
  rd->depth--;
}

/* Index of the link named `name`, or -1. */
static int find_link(const UrdfRobot *r, const char *name) {
  for (int i = 0; name && i < r->nlinks; i++)
    if (r->links[i].name && strcmp(r->links[i].name, name) == 0) return i;
  return -1;
}

static void check_unique_names(Diag *d, const UrdfRobot *r) {
  for (int i = 0; i < r->nlinks; i++)
    for (int k = 0; k < i; k++)
      if (r->links[i].name && r->links[k].name && strcmp(r->links[i].name, r->links[k].name) == 0) {
        diag_error(d, r->links[i].loc, "a second link named '%s' (the first is on line %d)",
                   r->links[i].name, r->links[k].loc.line);
        break;
      }
  for (int i = 0; i < r->njoints; i++)
    for (int k = 0; k < i; k++)
      if (r->joints[i].name && r->joints[k].name && strcmp(r->joints[i].name, r->joints[k].name) == 0) {
        diag_error(d, r->joints[i].loc, "a second joint named '%s' (the first is on line %d)",
                   r->joints[i].name, r->joints[k].loc.line);
        break;
      }
}

/* Resolve parent and child names; the links must form one tree. */
static void check_tree(Diag *d, UrdfRobot *r) {
  check_unique_names(d, r);
  for (int i = 0; i < r->njoints; i++) {
    UrdfJoint *j = &r->joints[i];
    const char *jn = j->name ? j->name : "?";
    if (!j->parent || !j->child) {
      diag_error(d, j->loc, "joint '%s' needs a <%s link=\"...\"/>", jn, j->parent ? "child" : "parent");
      continue;
    }
    j->parent_link = find_link(r, j->parent);
    j->child_link = find_link(r, j->child);
    if (j->parent_link < 0 || j->child_link < 0) {
      diag_error(d, j->loc, "joint '%s' names the link '%s', which is not declared", jn,
                 j->parent_link < 0 ? j->parent : j->child);
      continue;
    }
    if (j->parent_link == j->child_link) {
      diag_error(d, j->loc, "joint '%s' joins the link '%s' to itself", jn, j->child);
      continue;
    }
    UrdfLink *c = &r->links[j->child_link];
    if (c->parent_joint >= 0) {
      diag_error(d, j->loc, "link '%s' is the child of two joints ('%s' and '%s'): closed loops "
                 "are not supported", c->name, r->joints[c->parent_joint].name, jn);
      continue;
    }
    c->parent_joint = i;
  }
  if (d->nerrors) return;
  r->root = -1;
  for (int i = 0; i < r->nlinks; i++) {
    if (r->links[i].parent_joint >= 0) continue;
    if (r->root < 0) r->root = i;
    else
      diag_error(d, r->links[i].loc, "link '%s' is not connected to the tree of '%s' (no joint "
                 "has it as its child)", r->links[i].name, r->links[r->root].name);
  }
  if (r->root < 0 && r->nlinks > 0) {
    diag_error(d, r->links[0].loc, "the joints form a closed loop: no link is the root");
    return;
  }
  /* every link's chain of parents must reach the root within nlinks steps */
  for (int i = 0; i < r->nlinks && !d->nerrors; i++) {
    int k = i, steps = 0;
    while (r->links[k].parent_joint >= 0 && steps++ <= r->nlinks)
      k = r->joints[r->links[k].parent_joint].parent_link;
    if (k != r->root)
      diag_error(d, r->links[i].loc, "link '%s' is on a closed loop of joints", r->links[i].name);
  }
}

int urdf_read(const char *text, size_t len, Diag *d, UrdfRobot *out) {
  Reader rd;
  memset(out, 0, sizeof *out);
  memset(&rd, 0, sizeof rd);
  rd.d = d;
  rd.r = out;
  int before = d->nerrors;
  if (len > (size_t)INT_MAX) {
    diag_error(d, NOWHERE, "the file is too large");
    return d->nerrors - before;
  }
  rd.xp = XML_ParserCreate(NULL);
  if (!rd.xp) {
    diag_error(d, NOWHERE, "out of memory");
    return d->nerrors - before;
  }
  XML_SetUserData(rd.xp, &rd);
  XML_SetElementHandler(rd.xp, on_start, on_end);
  if (XML_Parse(rd.xp, text, (int)len, XML_TRUE) == XML_STATUS_ERROR && !rd.too_deep && !rd.oom) {
    SrcLoc l = {(int)XML_GetCurrentLineNumber(rd.xp), (int)XML_GetCurrentColumnNumber(rd.xp) + 1};
    diag_error(d, l, "malformed XML: %s", XML_ErrorString(XML_GetErrorCode(rd.xp)));
  }
  XML_ParserFree(rd.xp);
  if (rd.oom) diag_error(d, NOWHERE, "out of memory");
  if (d->nerrors == before && !rd.seen_robot) diag_error(d, FIRST_LINE, "no <robot> element");
  if (d->nerrors == before && out->nlinks == 0)
    diag_error(d, FIRST_LINE, "the robot has no links");
  if (d->nerrors == before) check_tree(d, out);
  return d->nerrors - before;
}

void urdf_free(UrdfRobot *r) {
  if (!r) return;
  for (int i = 0; i < r->nlinks; i++) free(r->links[i].name);
  for (int i = 0; i < r->njoints; i++) {
    free(r->joints[i].name);
    free(r->joints[i].parent);
    free(r->joints[i].child);
  }
  free(r->links);
  free(r->joints);
  free(r->name);
  memset(r, 0, sizeof *r);
}
