/*
** urdf.h — read a robot description in URDF, the XML format of the
** robotics trade, into plain structs for `eomc import`.
**
** The reader keeps what the dynamics need: links with their inertials
** (origin xyz/rpy, mass, inertia about the mass centre in the inertial's
** axes), joints of kind revolute, continuous, prismatic or fixed with
** their parent, child, origin, axis, limits and damping.  Visual and
** collision geometry, materials, transmissions and simulator extensions
** are skipped.  Other elements, other joint kinds (floating, planar),
** mimic joints, bad numbers and a link tree that is not one tree are
** errors, reported to the Diag at the element's line and column.
*/
#ifndef EOMC_CLI_URDF_H
#define EOMC_CLI_URDF_H

#include <stddef.h>
#include "front/diag.h"

typedef struct UrdfInertial {
  int present;
  double xyz[3], rpy[3];     /* mass centre and inertial axes in the link's frame */
  double mass;
  double ixx, ixy, ixz, iyy, iyz, izz;  /* about the mass centre, inertial axes */
  SrcLoc loc;
} UrdfInertial;

typedef struct UrdfLink {
  char *name;
  SrcLoc loc;
  UrdfInertial inertial;
  int parent_joint;          /* index of the joint whose child it is, -1 for the root */
} UrdfLink;

typedef enum UrdfJointKind {
  URDF_REVOLUTE, URDF_CONTINUOUS, URDF_PRISMATIC, URDF_FIXED
} UrdfJointKind;

typedef struct UrdfJoint {
  char *name;
  SrcLoc loc;
  UrdfJointKind kind;
  char *parent, *child;      /* link names */
  int parent_link, child_link;
  double xyz[3], rpy[3];     /* joint frame in the parent link's frame */
  double axis[3];            /* unit vector in the joint frame (default x) */
  int has_limit;
  double lower, upper, effort, velocity;
  double damping, friction;  /* from <dynamics>, 0 when absent */
} UrdfJoint;

typedef struct UrdfRobot {
  char *name;
  UrdfLink *links;
  int nlinks;
  UrdfJoint *joints;
  int njoints;
  int root;                  /* the link that is no joint's child */
} UrdfRobot;

/* Parse `text` (len bytes) and check the tree.  Returns the number of
** errors reported to d (0: `out` is complete).  Free with urdf_free()
** either way. */
int urdf_read(const char *text, size_t len, Diag *d, UrdfRobot *out);
void urdf_free(UrdfRobot *r);

/* The kind's URDF spelling. */
const char *urdf_kind_name(UrdfJointKind k);

#endif
