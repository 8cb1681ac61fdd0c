/*
** symbolic_chain.cc — the dynamics of rigid bodies placed on chains of frames.
**
** Bodies whose mass centre is a point of a chain of turns and shifts (rotx,
** roty, rotz, dh and products of them) skip the Lagrangian.  Their frames
** form a tree (chains share their common steps), and the equations come
** from it the way the recursive algorithms of robot dynamics work in link
** frames, written out symbolically so that CSE sees the chain's structure:
**
**   outward  angular velocity w and acceleration al of each frame and the
**            velocity v and acceleration a of its origin, in its own axes,
**            with q'' = 0 and gravity as an acceleration of the base
**            (Luh, Walker and Paul, "On-line computational scheme for
**            mechanical manipulators", 1980);
**   inward   the composite inertia of everything outboard of each frame, and
**            M_ij = S_i . (X Ic S_j) pairing each step's motion with the
**            composite inertia force carried inward to the steps inboard of
**            it: the composite-rigid-body algorithm (Walker and Orin, 1982;
**            Featherstone, "Rigid Body Dynamics Algorithms", 2008, §6.2);
**   inward   the inertia and gravity forces of the bodies summed into each
**            frame and projected on each step's motion: the bias forces of
**            recursive Newton-Euler (Featherstone 2008, §5.3).
**
** A step's "motion" is the turn about its axis or the shift along one of
** the frame's axes; a step whose angle or shift depends on coordinates q_j
** moves by d(angle)/dq_j per unit rate of q_j, so chains of any such steps
** (prismatic joints, angles like q1 + q2, offsets depending on q) work,
** and steps driven by t alone only add to the bias.  The generalized forces
** are Kane's form of Lagrange's equations (Kane and Levinson, "Dynamics:
** Theory and Applications", 1985, ch. 6), so both routes agree.
*/
#include "sym/symbolic_internal.h"

#include <array>
#include <cassert>

using namespace GiNaC;

namespace eomsym {

namespace {

typedef std::array<ex, 3> Vec3;

Vec3 cross(const Vec3 &x, const Vec3 &y) {
  Vec3 r;
  for (int i = 0; i < 3; i++) {
    int a = (i + 1) % 3, b = (i + 2) % 3;
    r[i] = x[a] * y[b] - x[b] * y[a];
  }
  return r;
}

ex dot(const Vec3 &x, const Vec3 &y) {
  exvector t;
  for (int i = 0; i < 3; i++)
    if (!x[i].is_zero() && !y[i].is_zero()) t.push_back(x[i] * y[i]);
  return add(t);
}

Vec3 plus(const Vec3 &x, const Vec3 &y) { return Vec3{x[0] + y[0], x[1] + y[1], x[2] + y[2]}; }

Vec3 scaled(const ex &c, const Vec3 &x) { return Vec3{c * x[0], c * x[1], c * x[2]}; }

/* I x for a symmetric 3x3 I kept row-major */
Vec3 times(const ex *I, const Vec3 &x) {
  Vec3 r;
  for (int i = 0; i < 3; i++) {
    exvector t;
    for (int j = 0; j < 3; j++)
      if (!I[3 * i + j].is_zero() && !x[j].is_zero()) t.push_back(I[3 * i + j] * x[j]);
    r[i] = add(t);
  }
  return r;
}

/* A rigid body on a frame: mass centre at a constant l in the frame's axes
** (one that moves in the frame gets a shift step of its own, see add_body). */
struct Body {
  ex m;
  Vec3 l;
  bool spins;
  ex I[9];  /* about the mass centre; zero for a point mass */
};

/* One direction a step moves in: the turn about its axis (angular) or the
** shift along axis `axis`; per unit rate of q_j it moves by coeff[j]. */
struct Unit {
  bool angular;
  int axis;
  std::vector<ex> coeff;
};

/* The rigid inertia of a set of bodies about a frame's origin, in its axes:
** mass, first moment h = sum m c, and second moment J = sum (I_c + m (|c|^2 1 - c c^T)). */
struct Inertia {
  exvector m, h[3], J[9];  /* the terms of each, summed in composite() */
};

struct Frame {
  int parent;
  Turn step;                 /* from the parent's axes to this frame's */
  Vec3 w, al, v, a;          /* outward pass (al and a with q'' = 0, a with -G) */
  Vec3 alq, aq;              /* al and a with the q'' terms */
  std::vector<Body> bodies;
  std::vector<Unit> units;   /* the step's motions that depend on q */
};

/* spatial force: moment n about the frame origin and force f, frame axes */
struct Wrench {
  Vec3 n, f;
};

}  // namespace

struct FrameTree::Impl {
  ChainTools tools;
  std::vector<Frame> frames;

  int child(int parent, const Turn &f);
  Wrench to_parent(int k, Wrench x) const;
  void composite(std::vector<ex> &m, std::vector<Vec3> &h, std::vector<std::array<ex, 9>> &J) const;
  void mass_matrix(std::vector<std::vector<exvector>> &terms) const;
  void inertia_forces(bool with_accel, std::vector<exvector> &terms) const;
};

FrameTree::FrameTree(const ChainTools &tools) : impl_(new Impl) {
  impl_->tools = tools;
  Frame root;
  root.parent = -1;
  for (int c = 0; c < 3; c++) {
    root.w[c] = root.al[c] = root.alq[c] = root.v[c] = 0;
    root.a[c] = root.aq[c] = -tools.gravity[c];
  }
  impl_->frames.push_back(root);
}

FrameTree::~FrameTree() {}

int FrameTree::frame(const std::vector<Turn> &steps, size_t n) {
  assert(n <= steps.size());
  return n == 0 ? 0 : impl_->child(frame(steps, n - 1), steps[n - 1]);
}

static bool same_step(const Turn &x, const Turn &y) {
  if (x.shift != y.shift) return false;
  if (x.shift) return x.s[0].is_equal(y.s[0]) && x.s[1].is_equal(y.s[1]) && x.s[2].is_equal(y.s[2]);
  return x.axis == y.axis && x.angle.is_equal(y.angle);
}

/* The frame after step f from `parent`, with its outward quantities:
**   turn by th about e:  w = F^T w_p + th' e,  al = F^T al_p + th'' e + (F^T w_p) x th' e,
**                        v = F^T v_p,  a = F^T a_p;
**   shift by s:          v = v_p + w x s + s',  a = a_p + al x s + w x (w x s) + 2 w x s' + s''. */
int FrameTree::Impl::child(int parent, const Turn &f) {
  for (size_t k = 1; k < frames.size(); k++)
    if (frames[k].parent == parent && same_step(frames[k].step, f)) return (int)k;
  const Frame &p = frames[parent];
  Frame c;
  c.parent = parent;
  c.step = f;
  c.w = p.w, c.al = p.al, c.v = p.v, c.a = p.a, c.alq = p.alq, c.aq = p.aq;
  if (!f.shift) {
    ex rate = tools.rate(f.angle), accelq = tools.rate(rate), accel = tools.no_accel(accelq);
    for (Vec3 *vec : {&c.w, &c.al, &c.v, &c.a, &c.alq, &c.aq}) turn_back(f, vec->data());
    Vec3 e{0, 0, 0};
    e[f.axis] = 1;
    Vec3 spin = scaled(rate, e), we = cross(c.w, spin);
    c.al = plus(plus(c.al, scaled(accel, e)), we);
    c.alq = plus(plus(c.alq, scaled(accelq, e)), we);
    c.w = plus(c.w, spin);
    Unit u{true, f.axis, std::vector<ex>(tools.nq)};
    bool moves = false;
    for (int j = 0; j < tools.nq; j++) moves = !(u.coeff[j] = tools.d_dq(j, f.angle)).is_zero() || moves;
    if (moves) c.units.push_back(u);
  } else {
    Vec3 s{f.s[0], f.s[1], f.s[2]}, sd, sdd, sddq;
    for (int i = 0; i < 3; i++) {
      sd[i] = tools.rate(s[i]);
      sddq[i] = tools.rate(sd[i]);
      sdd[i] = tools.no_accel(sddq[i]);
    }
    Vec3 wxs = cross(c.w, s), coriolis = plus(cross(c.w, wxs), scaled(2, cross(c.w, sd)));
    c.v = plus(plus(c.v, wxs), sd);
    c.a = plus(plus(c.a, cross(c.al, s)), plus(coriolis, sdd));
    c.aq = plus(plus(c.aq, cross(c.alq, s)), plus(coriolis, sddq));
    for (int axis = 0; axis < 3; axis++) {
      Unit u{false, axis, std::vector<ex>(tools.nq)};
      bool moves = false;
      for (int j = 0; j < tools.nq; j++) moves = !(u.coeff[j] = tools.d_dq(j, s[axis])).is_zero() || moves;
      if (moves) c.units.push_back(u);
    }
  }
  frames.push_back(c);
  return (int)frames.size() - 1;
}

/* T = m/2 |v + w x l|^2 + w.(I w)/2 */
ex FrameTree::add_body(int k, const ex &mass, const ex local[3], const ex *inertia) {
  assert(k >= 0 && (size_t)k < impl_->frames.size());
  Body b;
  b.m = mass;
  b.spins = inertia != nullptr;
  for (int i = 0; i < 9; i++) b.I[i] = inertia ? inertia[i] : ex(0);
  bool moving = false;
  for (int c = 0; c < 3; c++) moving = moving || !impl_->tools.rate(local[c]).is_zero();
  if (moving) { /* a mass centre that moves in the frame: a step of its own */
    Turn f;
    f.shift = true;
    for (int c = 0; c < 3; c++) f.s[c] = local[c];
    k = impl_->child(k, f);
    b.l = Vec3{0, 0, 0};
  } else {
    b.l = Vec3{local[0], local[1], local[2]};
  }
  Frame &F = impl_->frames[k];
  F.bodies.push_back(b);
  Vec3 vP = plus(F.v, cross(F.w, b.l));
  ex T = mass / 2 * dot(vP, vP);
  if (b.spins) T = T + dot(F.w, times(b.I, F.w)) / 2;
  return T;
}

/* A wrench on frame k expressed in its parent's axes, about the parent's origin. */
Wrench FrameTree::Impl::to_parent(int k, Wrench x) const {
  const Turn &f = frames[k].step;
  if (!f.shift) {
    turn_forward(f, x.n.data());
    turn_forward(f, x.f.data());
  } else {
    x.n = plus(x.n, cross(Vec3{f.s[0], f.s[1], f.s[2]}, x.f));
  }
  return x;
}

/* The composite inertia of each frame's subtree about its origin, in its
** axes, leaves first (a frame's children come after it).  Carried across a
** turn F: h -> F h, J -> F J F^T; across a shift s (the parallel-axis rule
** for a first moment h that is not zero):
**   h -> h + m s,  J -> J + m (|s|^2 1 - s s^T) + 2 (s.h) 1 - s h^T - h s^T. */
void FrameTree::Impl::composite(std::vector<ex> &m, std::vector<Vec3> &h,
                                std::vector<std::array<ex, 9>> &J) const {
  const size_t n = frames.size();
  std::vector<Inertia> sum(n);
  for (size_t k = 0; k < n; k++)
    for (const Body &b : frames[k].bodies) {
      Inertia &s = sum[k];
      s.m.push_back(b.m);
      ex l2 = dot(b.l, b.l);
      for (int i = 0; i < 3; i++) {
        if (!b.l[i].is_zero()) s.h[i].push_back(b.m * b.l[i]);
        for (int j = 0; j < 3; j++) {
          ex e = b.I[3 * i + j] + b.m * ((i == j ? l2 : ex(0)) - b.l[i] * b.l[j]);
          if (!e.is_zero()) s.J[3 * i + j].push_back(e);
        }
      }
    }
  m.assign(n, 0), h.assign(n, Vec3{0, 0, 0}), J.assign(n, std::array<ex, 9>{0, 0, 0, 0, 0, 0, 0, 0, 0});
  for (size_t k = n; k-- > 0;) {
    m[k] = add(sum[k].m);
    for (int i = 0; i < 3; i++) h[k][i] = add(sum[k].h[i]);
    for (int i = 0; i < 3; i++)
      for (int j = i; j < 3; j++) J[k][3 * i + j] = J[k][3 * j + i] = add(sum[k].J[3 * i + j]);
    if (k == 0 || m[k].is_zero()) continue;
    const Turn &f = frames[k].step;
    Inertia &p = sum[frames[k].parent];
    ex hp[3] = {h[k][0], h[k][1], h[k][2]}, Jp[9];
    for (int i = 0; i < 9; i++) Jp[i] = J[k][i];
    if (!f.shift) {
      turn_forward(f, hp);
      for (int col = 0; col < 3; col++) { /* F J: the columns turned */
        ex c[3] = {Jp[col], Jp[3 + col], Jp[6 + col]};
        turn_forward(f, c);
        for (int r = 0; r < 3; r++) Jp[3 * r + col] = c[r];
      }
      for (int r = 0; r < 3; r++) turn_forward(f, Jp + 3 * r);  /* (F J) F^T: the rows */
    } else {
      Vec3 s{f.s[0], f.s[1], f.s[2]}, hk = h[k];
      ex s2 = dot(s, s), sh2 = 2 * dot(s, hk);
      for (int i = 0; i < 3; i++) {
        hp[i] = hk[i] + m[k] * s[i];
        for (int j = 0; j < 3; j++)
          Jp[3 * i + j] = Jp[3 * i + j] + m[k] * ((i == j ? s2 : ex(0)) - s[i] * s[j]) +
                          (i == j ? sh2 : ex(0)) - s[i] * hk[j] - hk[i] * s[j];
      }
    }
    p.m.push_back(m[k]);
    for (int i = 0; i < 3; i++)
      if (!hp[i].is_zero()) p.h[i].push_back(hp[i]);
    for (int i = 0; i < 3; i++)
      for (int j = i; j < 3; j++)
        if (!Jp[3 * i + j].is_zero()) p.J[3 * i + j].push_back(Jp[3 * i + j]);
    tools.tick("deriving the composite inertias");
  }
}

/* The component of a wrench along a unit motion (power per unit rate). */
static ex along(const Unit &u, const Wrench &x) { return u.angular ? x.n[u.axis] : x.f[u.axis]; }

/* M_ij = sum over pairs of motions (u, w) on one path from the base, u at
** frame k and w at k or inboard of it, of coeff_u[i] coeff_w[j] w.(X Ic_k u),
** and its mirror: the composite-rigid-body algorithm on unit motions. */
void FrameTree::Impl::mass_matrix(std::vector<std::vector<exvector>> &terms) const {
  std::vector<ex> m;
  std::vector<Vec3> h;
  std::vector<std::array<ex, 9>> J;
  composite(m, h, J);
  const int nq = tools.nq;
  auto pair = [&](const Unit &u, const Unit &w, const ex &K, bool mirror) {
    if (K.is_zero()) return;
    for (int i = 0; i < nq; i++) {
      if (u.coeff[i].is_zero()) continue;
      for (int j = 0; j < nq; j++) {
        if (w.coeff[j].is_zero()) continue;
        ex e = u.coeff[i] * w.coeff[j] * K;
        terms[i][j].push_back(e);
        if (mirror) terms[j][i].push_back(e);
      }
    }
  };
  for (size_t k = 1; k < frames.size(); k++) {
    for (const Unit &u : frames[k].units) {
      Wrench x;  /* Ic_k u: the composite inertia's force for a unit motion u */
      Vec3 e{0, 0, 0};
      e[u.axis] = 1;
      if (u.angular) {
        x.n = Vec3{J[k][u.axis], J[k][3 + u.axis], J[k][6 + u.axis]};
        x.f = cross(e, h[k]);
      } else {
        x.n = cross(h[k], e);
        x.f = scaled(m[k], e);
      }
      for (const Unit &w : frames[k].units) pair(u, w, along(w, x), false);
      for (int c = (int)k; frames[c].parent > 0;) {
        x = to_parent(c, x);
        c = frames[c].parent;
        for (const Unit &w : frames[c].units) pair(u, w, along(w, x), true);
      }
    }
    tools.tick("deriving the mass matrix of the bodies");
  }
}

/* Each frame's wrench of the inertia and gravity forces of its subtree,
** leaves first, projected on the frame's step motions (at q'' = 0 unless
** with_accel):  F_b = m (a + al x l + w x (w x l)),  N_b = I al + w x (I w) + l x F_b. */
void FrameTree::Impl::inertia_forces(bool with_accel, std::vector<exvector> &terms) const {
  const size_t n = frames.size();
  std::vector<std::array<exvector, 6>> sum(n);  /* n then f */
  for (size_t k = n; k-- > 1;) {
    const Frame &F = frames[k];
    const Vec3 &a = with_accel ? F.aq : F.a, &al = with_accel ? F.alq : F.al;
    for (const Body &b : F.bodies) {
      Vec3 aP = plus(plus(a, cross(al, b.l)), cross(F.w, cross(F.w, b.l)));
      Vec3 fb = scaled(b.m, aP), nb = cross(b.l, fb);
      if (b.spins) nb = plus(nb, plus(times(b.I, al), cross(F.w, times(b.I, F.w))));
      for (int i = 0; i < 3; i++) sum[k][i].push_back(nb[i]), sum[k][3 + i].push_back(fb[i]);
    }
    Wrench x;
    for (int i = 0; i < 3; i++) x.n[i] = add(sum[k][i]), x.f[i] = add(sum[k][3 + i]);
    for (const Unit &u : F.units) {
      ex load = along(u, x);
      for (int j = 0; j < tools.nq; j++)
        if (!u.coeff[j].is_zero() && !load.is_zero()) terms[j].push_back(u.coeff[j] * load);
    }
    if (F.parent > 0) {
      x = to_parent((int)k, x);
      for (int i = 0; i < 3; i++) sum[F.parent][i].push_back(x.n[i]), sum[F.parent][3 + i].push_back(x.f[i]);
    }
    tools.tick("deriving the forces of the bodies");
  }
}

void FrameTree::equations(std::vector<std::vector<ex>> &M, std::vector<ex> &bias,
                          std::vector<ex> &full) {
  const int nq = impl_->tools.nq;
  assert((int)M.size() == nq);
  std::vector<std::vector<exvector>> mterms(nq, std::vector<exvector>(nq));
  impl_->mass_matrix(mterms);
  for (int i = 0; i < nq; i++)
    for (int j = 0; j < nq; j++)
      if (!mterms[i][j].empty()) M[i][j] = M[i][j] + add(mterms[i][j]);
  std::vector<exvector> bterms(nq), fterms(nq);
  impl_->inertia_forces(false, bterms);
  impl_->inertia_forces(true, fterms);
  bias.assign(nq, 0);
  full.assign(nq, 0);
  for (int j = 0; j < nq; j++) bias[j] = add(bterms[j]), full[j] = add(fterms[j]);
}

/* v <- F v: a vector in the axes after turn F, expressed in the axes before it. */
void turn_forward(const Turn &f, ex v[3]) {
  if (f.shift) return;
  int i = (f.axis + 1) % 3, j = (f.axis + 2) % 3;
  ex c = cos(f.angle), s = sin(f.angle);
  ex vi = c * v[i] - s * v[j], vj = s * v[i] + c * v[j];
  v[i] = vi, v[j] = vj;
}

void turn_back(const Turn &f, ex v[3]) {
  if (f.shift) return;  /* a translation leaves directions alone */
  int i = (f.axis + 1) % 3, j = (f.axis + 2) % 3;  /* the plane turned */
  ex c = cos(f.angle), s = sin(f.angle);
  ex vi = c * v[i] + s * v[j], vj = c * v[j] - s * v[i];
  v[i] = vi, v[j] = vj;
}

}  // namespace eomsym
