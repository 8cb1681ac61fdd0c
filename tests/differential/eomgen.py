"""eomgen.py — random scalar Lagrangian models for the differential tests.

generate(seed) builds one model as a small expression tree: 1-4 coordinates,
a kinetic energy T = 1/2 q'^T (L L^T + eps I) q' (+ 1/2 c y'^2 for lets y),
so the mass matrix is positive definite by construction (bodies, some on
chains of 4x4 dh transforms, only add to it), random potentials,
Lagrangian terms linear in the rates, Rayleigh dissipation and generalized
forces with inputs.  The same tree is printed as .eom text (to_eom) and
turned into SymPy expressions (to_sympy in reference.py), so both sides
start from one set of energies and nothing else is shared.

Every function with a restricted domain gets an argument that stays inside
it for the sampled states (|q| <= 1.5, |q'| <= 2, 0 <= t <= 3, params in
[0.5, 2], inputs in [-2, 2]): sqrt/log of 1 + x^2 or c + cos x, asin of
sin(x)/2, tan of sin(x), division by positive denominators.
"""

import random

# Names that are legal in the language but collide with C keywords, libm,
# the generated code's own argument names or context words of the grammar.
TRICKY_NAMES = ["double", "int", "y0", "j1", "mass", "at", "on", "inertia",
                "orient", "q", "qd", "p", "u", "M", "f", "main", "static",
                "e", "E", "I", "T", "V", "x", "tmp", "signed", "exp2", "fabs",
                "NAN", "INFINITY", "errno", "register", "inline", "restrict"]


class Model:
    """One generated model: declarations and terms in source order."""

    def __init__(self, seed):
        self.seed = seed
        self.name = "d%d" % seed
        self.use_model_stmt = True
        self.coords = []     # names
        self.params = []     # (name, default_expr)
        self.consts = []     # (name, number_text)
        self.inputs = []     # names
        self.lets = []       # (name, expr)
        self.terms = []      # (kind, target coord name or None, expr, essential)
        self.timed_lets = set()  # lets whose value depends on t
        self.outputs = []    # (name, expr)
        self.vector_lets = set()  # lets whose value is a vector or matrix
        self.initial = []    # (coord name, is_rate, number_text)

    def kinds_of_names(self):
        k = {}
        for c in self.coords:
            k[c] = "coord"
        for n, _ in self.params:
            k[n] = "param"
        for n, _ in self.consts:
            k[n] = "const"
        for n in self.inputs:
            k[n] = "input"
        for n, _ in self.lets:
            k[n] = "let"
        return k


# Expression nodes are tuples:
#   ("num", text)  ("var", name)  ("t",)  ("pi",)  ("rate", e)  ("neg", e)
#   ("add"|"sub"|"mul"|"div"|"pow", a, b)  ("call", fname, [args])

def num(text):
    return ("num", text)


def number_text(rng, lo, hi):
    """A decimal literal in one of the spellings the language accepts."""
    v = rng.uniform(lo, hi)
    style = rng.randrange(5)
    if style == 0:
        return "%d" % max(1, int(round(v)))
    if style == 1:
        return "%.3f" % v
    if style == 2 and v < 1:
        return ("%.3f" % v)[1:]          # ".375"
    if style == 3:
        return "%.4fe-1" % (v * 10)      # "12.5000e-1"
    return "%.2fe1" % (v / 10)           # "0.15e1"


class ExprGen:
    """Random expressions over the model's names."""

    def __init__(self, rng, model):
        self.rng = rng
        self.m = model

    def leaf(self, allow):
        """A coordinate, parameter, const, let, input, time or number."""
        r = self.rng
        pool = []
        if "q" in allow:
            pool += [("var", c) for c in self.m.coords] * 3
        if "p" in allow:
            pool += [("var", n) for n, _ in self.m.params]
            pool += [("var", n) for n, _ in self.m.consts]
        scalar_lets = [n for n, _ in self.m.lets if n not in self.m.vector_lets]
        if "let" in allow:
            pool += [("var", n) for n in scalar_lets]
        elif "qlet" in allow:
            # lets free of time: allowed where M(q) must not depend on t
            pool += [("var", n) for n in scalar_lets if n not in self.m.timed_lets]
        if "u" in allow:
            pool += [("var", n) for n in self.m.inputs]
        if "qd" in allow:
            pool += [("rate", ("var", c)) for c in self.m.coords] * 2
        if "t" in allow:
            pool.append(("t",))
        if "pi" in allow and r.random() < 0.3:
            pool.append(("pi",))
        pool.append(num(number_text(r, 0.2, 3.0)))
        return r.choice(pool)

    def positive(self, depth, allow):
        """An expression > 0.4 on the sampled domain."""
        r = self.rng
        x = self.expr(depth, allow)
        c = r.randrange(3)
        if c == 0:
            return ("add", num(number_text(r, 1.0, 2.0)), ("pow", x, num("2")))
        if c == 1:
            return ("add", num("2"), ("call", "cos", [x]))
        return ("add", num("1.5"), ("call", r.choice(["sin", "tanh"]), [x]))

    def bounded(self, depth, allow):
        """An expression with |value| <= 1 on any domain."""
        fn = self.rng.choice(["sin", "cos", "tanh"])
        return ("call", fn, [self.expr(depth, allow)])

    def expr(self, depth, allow):
        r = self.rng
        if depth <= 0 or r.random() < 0.25:
            return self.leaf(allow)
        d = depth - 1
        k = r.randrange(22)
        if k < 4:
            return (r.choice(["add", "sub"]), self.expr(d, allow), self.expr(d, allow))
        if k < 8:
            return ("mul", self.expr(d, allow), self.expr(d, allow))
        if k == 8:
            return ("div", self.expr(d, allow), self.positive(d - 1, allow))
        if k == 9:
            return ("pow", self.expr(d, allow), num(r.choice(["2", "3"])))
        if k == 10:
            # non-integer power of a positive base
            e = r.choice([num("0.5"), num("1.5")] +
                         ([("var", n) for n, _ in self.m.params] if "p" in allow else []))
            return ("pow", self.positive(d - 1, allow), e)
        if k == 11:
            return ("neg", self.expr(d, allow))
        if k < 15:
            return ("call", r.choice(["sin", "cos"]), [self.expr(d, allow)])
        if k == 15:
            return ("call", r.choice(["exp", "atan", "tanh", "sinh", "cosh"]),
                    [self.bounded(d - 1, allow)])
        if k == 16:
            return ("call", r.choice(["sqrt", "log"]), [self.positive(d - 1, allow)])
        if k == 17:
            return ("call", r.choice(["asin", "acos"]),
                    [("div", self.bounded(d - 1, allow), num("2"))])
        if k == 18:
            return ("call", "tan", [self.bounded(d - 1, allow)])
        if k == 19:
            return ("call", "atan2", [self.expr(d, allow), self.positive(d - 1, allow)])
        if k == 20 and r.random() < 0.3:
            # abs of something that stays away from zero: a smooth function
            return ("call", "abs", [("sub", self.positive(d - 1, allow), num("0.2"))])
        return self.leaf(allow)


def children(e):
    """Sub-expressions of a node (vectors and matrices hold lists)."""
    out = []
    for a in e[1:]:
        if isinstance(a, tuple):
            out.append(a)
        elif isinstance(a, list):
            for b in a:
                out.extend(b if isinstance(b, list) else [b])
    return out


def uses_time(e, timed_lets):
    """Does expression e depend on t (directly or through a let)?"""
    if e[0] == "t":
        return True
    if e[0] == "var":
        return e[1] in timed_lets
    return any(uses_time(a, timed_lets) for a in children(e))


def uses_coord(e, m):
    """Does expression e mention a coordinate (directly)?"""
    if e[0] == "var":
        return e[1] in m.coords
    return any(uses_coord(a, m) for a in children(e))


def substitute(e, name, value):
    """e with every ("var", name) replaced by value (a tree copy)."""
    if isinstance(e, list):
        return [substitute(b, name, value) for b in e]
    if not isinstance(e, tuple):
        return e
    if e == ("var", name):
        return value
    return tuple(substitute(a, name, value) for a in e)


def add_bodies(rng, m, g, used):
    """Rigid bodies on the coordinates: orientation a product of elementary
    rotations, position R*arm + offset, diagonal or full inertia; gravity,
    forces at points, torques on bodies and potentials of vectors."""
    params = [("var", n) for n, _ in m.params]
    points, frames = [], []
    # Its own stream (the other draws, and so the other models, stay as
    # they were): a second body hung from the first as R1*a1 + R1*R2*a2,
    # a sum of rotated arms that is a point of a chain of frames.
    chain = random.Random(m.seed * 1000003 + 17)
    nturns = []
    for b in range(rng.randint(1, 2)):
        R = None
        nturns.append(0)
        # Kept small: SymPy's side grows fast with nested rotations.
        for _ in range(rng.randint(1, 2 if len(m.coords) > 1 else 3)):
            nturns[-1] += 1
            ang = g.leaf({"q", "p"})
            if not uses_coord(ang, m) and rng.random() < 0.8:
                ang = ("add", ang, ("var", rng.choice(m.coords)))
            r = ("call", rng.choice(["rotx", "roty", "rotz"]), [ang])
            R = r if R is None else ("mul", R, r)
        rname = pick_names(rng, 1, "R", used, False)[0]
        arm = ("vec", [g.leaf({"p"}), num(number_text(rng, 0.1, 1.0)), num("0")])
        off = ("vec", [g.leaf({"q", "p"}) for _ in range(3)])
        pname = pick_names(rng, 1, "r", used, False)[0]
        point = ("add", ("mul", ("var", rname), arm), off)
        if b == 1 and sum(nturns) <= 3 and chain.random() < 0.5:
            R = ("mul", frames[0], R)
            hinge = ("vec", [num(number_text(chain, 0.1, 1.0)) for _ in range(3)])
            point = (chain.choice(["add", "sub"]), ("mul", frames[0], hinge), ("mul", ("var", rname), arm))
        m.lets.append((rname, R))
        m.vector_lets.add(rname)
        m.lets.append((pname, point))
        m.vector_lets.add(pname)
        points.append(("var", pname))
        frames.append(("var", rname))
        orient = inertia = None
        if rng.random() < 0.8:
            orient = ("var", rname)
            k = rng.randrange(3)
            if k == 0:
                inertia = ("call", "diag", [rng.choice(params), num(number_text(rng, 0.2, 1.0)),
                                            num(number_text(rng, 0.2, 1.0))])
            elif k == 1:
                inertia = ("mul", rng.choice(params), ("call", "diag", [num("1"), num("2"), num("1.5")]))
            else:  # symmetric, diagonally dominant: positive definite
                d = num(number_text(rng, 0.05, 0.3))
                inertia = ("mat", [[num("2"), d, num("0")], [d, num("1.5"), num("0.1")],
                                   [num("0"), num("0.1"), rng.choice(params)]])
        name = pick_names(rng, 1, "b", used, False)[0]
        m.terms.append(("body", name, (rng.choice(params), ("var", pname), orient, inertia), False))
    if rng.random() < 0.6:
        m.terms.append(("gravity", None, ("vec", [num("0"), ("neg", rng.choice(params)),
                                                  num(number_text(rng, 0.1, 1.0))]), False))
    if rng.random() < 0.4:
        F = ("vec", [g.expr(1, {"q", "p", "u", "t"}) for _ in range(3)])
        m.terms.append(("force_at", None, (F, rng.choice(points)), False))
    if rng.random() < 0.3:
        tau = ("vec", [g.expr(1, {"q", "p", "u"}) for _ in range(3)])
        m.terms.append(("torque_on", None, (tau, rng.choice(frames)), False))
    if rng.random() < 0.5:
        p = rng.choice(points)
        k = rng.randrange(3)
        if k == 0:
            e = ("mul", rng.choice(params), ("call", "dot", [p, p]))
        elif k == 1:
            e = ("pow", ("call", "norm", [("sub", p, ("vec", [num("0"), num("0"), num("2")]))]), num("2"))
        else:
            e = ("mul", rng.choice(params), ("index", p, rng.randint(1, 3)))
        m.terms.append(("potential", None, e, False))
    if rng.random() < 0.3 and len(points) == 2:
        c = ("call", "cross", [points[0], points[1]])
        m.terms.append(("potential", None, ("call", "dot", [c, c]), False))


def revolute_angle(rng, m, timed):
    """A joint angle: a coordinate, a sum or multiple of coordinates, an
    offset by a param; timed: a time-varying offset (first joint only)."""
    q = ("var", rng.choice(m.coords))
    k = 5 if timed else rng.randrange(5)
    if k == 1 and len(m.coords) > 1:
        return ("add", q, ("var", rng.choice([c for c in m.coords if c != q[1]])))
    if k == 2:
        return ("mul", num("2"), q)
    if k == 3:
        return ("neg", q)
    if k == 4 and m.params:
        return ("add", q, ("var", rng.choice(m.params)[0]))
    if k == 5:
        # t only in the first step from the base: a rigid motion of the base
        # frame leaves the part of T quadratic in q' (so M) free of t.
        return ("add", q, ("mul", num(number_text(rng, 0.1, 0.5)), ("call", "sin", [("t",)])))
    return q


def length(rng, m, zero=0.3):
    """A dh length: zero, a number or a param."""
    r = rng.random()
    if r < zero:
        return num("0")
    if r < 0.7 or not m.params:
        return num(number_text(rng, 0.1, 1.0))
    return ("var", rng.choice(m.params)[0])


def twist(rng, m):
    """A dh twist alpha: mostly 0 or +-pi/2, sometimes a number or a param."""
    r = rng.random()
    if r < 0.3:
        return num("0")
    if r < 0.5:
        return ("div", ("pi",), num("2"))
    if r < 0.7:
        return ("neg", ("div", ("pi",), num("2")))
    if r < 0.85 or not m.params:
        return num(number_text(rng, 0.2, 1.2))
    return ("var", rng.choice(m.params)[0])


def dh_step(rng, m, timed):
    """dh(theta, d, a, alpha) of a revolute, prismatic or fixed joint."""
    r = 0 if timed else rng.random()
    if r < 0.6:
        theta, d = revolute_angle(rng, m, timed), length(rng, m, 0.5)
    elif r < 0.9:
        # prismatic: the coordinate (plus an offset) is the joint distance d
        q = ("var", rng.choice(m.coords))
        d = q if rng.random() < 0.6 else ("add", q, num(number_text(rng, 0.2, 0.8)))
        theta = rng.choice([num("0"), num(number_text(rng, 0.2, 1.0)), ("div", ("pi",), num("2"))])
    else:
        theta, d = num(number_text(rng, 0.2, 1.0)), length(rng, m)
    return ("call", "dh", [theta, d, length(rng, m), twist(rng, m)])


def turns_of_step(step):
    """The rotation of a dh step as rotz(theta)*rotx(alpha) (its shifts
    do not turn): another spelling of rot() of a chain."""
    theta, alpha = step[2][0], step[2][3]
    return ("mul", ("call", "rotz", [theta]), ("call", "rotx", [alpha]))


def add_chain(rng, m, g, used):
    """Bodies placed on a kinematic chain of 4x4 dh transforms (the symbolic
    core's placed-body route): 1-4 steps, sometimes branching from an
    earlier frame, bodies at pos(T) + rot(T)*c with orientation rot(T) or
    another spelling of it, point masses, offsets that move with a
    coordinate, and a chain of rotx/roty/rotz alone; gravity, forces at
    points, torques on frames, potentials and outputs of chain points."""
    params = [("var", n) for n, _ in m.params]
    nsteps = rng.randint(1, 4)
    names = pick_names(rng, nsteps, "T", used, False)
    parent, steps, spelled = [], [], []
    timed = rng.random() < 0.15
    base = rng.random() < 0.1   # a literal 4x4 base transform: not a product of turns
    for j, name in enumerate(names):
        step = dh_step(rng, m, timed and j == 0)
        if j == 0:
            par = None
            e = step
            if base:
                lit = [[num("1"), num("0"), num("0"), num(number_text(rng, 0.1, 0.5))],
                       [num("0"), num("1"), num("0"), num("0")],
                       [num("0"), num("0"), num("1"), num(number_text(rng, 0.1, 0.5))],
                       [num("0"), num("0"), num("0"), num("1")]]
                e = ("mul", ("mat", lit), step)
            spell = None if base else turns_of_step(step)
        else:
            # mostly the previous frame; sometimes a branch off an earlier one
            par = j - 1 if j < 2 or rng.random() < 0.7 else rng.randrange(j - 1)
            e = ("mul", ("var", names[par]), step)
            spell = None if spelled[par] is None else ("mul", spelled[par], turns_of_step(step))
        parent.append(par)
        steps.append(e)
        spelled.append(spell)
        m.lets.append((name, e))
        m.vector_lets.add(name)
        if uses_time(e, m.timed_lets):
            m.timed_lets.add(name)
    # every frame that is nobody's parent carries a body (no unused lets)
    leaves = [j for j in range(nsteps) if j not in parent]
    extra = [j for j in range(nsteps) if j not in leaves and rng.random() < 0.3]
    frames = (leaves + extra)[:3]
    points, rots, point_lets = [], [], []
    for j in frames:
        Tn = ("var", names[j])
        P, R = ("call", "pos", [Tn]), ("call", "rot", [Tn])
        k = rng.randrange(6)
        if k == 0:
            point = P
        elif k == 1:
            c = [num(number_text(rng, 0.05, 0.5)), rng.choice(params + [num("0")]), num(number_text(rng, 0.1, 0.6))]
            point = ("add", P, ("mul", R, ("vec", c)))
        elif k == 2:
            point = ("add", ("mul", R, ("vec", [num("0"), num("0"), num(number_text(rng, 0.1, 0.6))])), P)
        elif k == 3:
            # a mass centre that slides along the link with a coordinate
            point = ("add", P, ("mul", R, ("vec", [("var", rng.choice(m.coords)), num("0"), num("0.1")])))
        elif k == 4:
            point = ("add", P, ("mul", num("0.5"), ("mul", R, ("vec", [num("0.2"), rng.choice(params), num("0")]))))
        else:
            # through a vector let
            pname = pick_names(rng, 1, "r", used, False)[0]
            m.lets.append((pname, ("add", P, ("mul", R, ("vec", [num("0"), num(number_text(rng, 0.1, 0.5)), num("0")])))))
            m.vector_lets.add(pname)
            point = ("var", pname)
            point_lets.append(pname)
        points.append(point)
        rots.append(R)
        orient = inertia = None
        if rng.random() < 0.65:
            k = rng.randrange(10)
            if k < 5:
                orient = R
            elif k < 7 and spelled[j] is not None:
                orient = spelled[j]
            elif k < 8:
                orient = ("mul", R, ("call", rng.choice(["rotx", "roty", "rotz"]), [num(number_text(rng, 0.2, 1.0))]))
            else:
                # an orientation unrelated to the frame of the point
                orient = ("mul", ("call", rng.choice(["rotx", "roty", "rotz"]), [("var", rng.choice(m.coords))]),
                          ("call", rng.choice(["rotx", "roty", "rotz"]), [("var", rng.choice(m.coords))]))
            inertia = body_inertia(rng, params)
        name = pick_names(rng, 1, "b", used, False)[0]
        m.terms.append(("body", name, (rng.choice(params + [num(number_text(rng, 0.3, 2.0))]), point, orient, inertia), False))
    if rng.random() < 0.3:
        # a chain of rotx/roty/rotz alone: the direction R*l from the origin
        R = None
        for _ in range(rng.randint(1, 2)):
            r = ("call", rng.choice(["rotx", "roty", "rotz"]), [revolute_angle(rng, m, False)])
            R = r if R is None else ("mul", R, r)
        point = ("mul", R, ("vec", [num("0"), rng.choice(params), num(number_text(rng, 0.2, 0.8))]))
        orient, inertia = (R, body_inertia(rng, params)) if rng.random() < 0.6 else (None, None)
        name = pick_names(rng, 1, "b", used, False)[0]
        m.terms.append(("body", name, (rng.choice(params), point, orient, inertia), False))
        points.append(point)
        rots.append(R)
    if rng.random() < 0.7:
        G = [rng.choice([num("0"), num(number_text(rng, 0.1, 1.0))]) for _ in range(2)]
        G.append(("neg", rng.choice(params + [num("9.81")])))
        rng.shuffle(G)
        m.terms.append(("gravity", None, ("vec", G), False))
    if rng.random() < 0.25:
        F = ("vec", [g.expr(1, {"q", "p", "u", "t"}) for _ in range(3)])
        m.terms.append(("force_at", None, (F, rng.choice(points)), False))
    if rng.random() < 0.2:
        tau = ("vec", [g.expr(1, {"q", "p", "u"}) for _ in range(3)])
        m.terms.append(("torque_on", None, (tau, rng.choice(rots)), False))
    if rng.random() < 0.3:
        p = rng.choice(points)
        m.terms.append(("potential", None, ("mul", rng.choice(params), ("call", "dot", [p, p])), False))
    if point_lets and rng.random() < 0.5:
        m.outputs.append((pick_names(rng, 1, "tip", used, False)[0],
                          ("index", ("var", rng.choice(point_lets)), rng.randint(1, 3))))


def body_inertia(rng, params):
    """A positive definite inertia: diagonal or full symmetric."""
    k = rng.randrange(3)
    if k == 0:
        return ("call", "diag", [rng.choice(params), num(number_text(rng, 0.2, 1.0)),
                                 num(number_text(rng, 0.2, 1.0))])
    if k == 1:
        return ("mul", rng.choice(params), ("call", "diag", [num("1"), num("2"), num("1.5")]))
    d = num(number_text(rng, 0.05, 0.3))   # diagonally dominant: positive definite
    return ("mat", [[num("2"), d, num("0")], [d, num("1.5"), num("0.1")],
                    [num("0"), num("0.1"), rng.choice(params)]])


def pick_names(rng, count, stem, used, tricky):
    names = []
    for i in range(count):
        name = None
        if tricky and rng.random() < 0.25:
            cands = [n for n in TRICKY_NAMES if n not in used]
            if cands:
                name = rng.choice(cands)
        if name is None:
            name = "%s%d" % (stem, i + 1)
            if name in used:
                name = "%s_%d" % (stem, len(used))
        used.add(name)
        names.append(name)
    return names


def add_branch_terms(m, g):
    """A third of the models get a force and a potential through the branch
    functions min, max, sign, step and clamp (non-smooth; compared away from
    their switches).  Drawn from a stream of their own and appended last, so
    the rest of each model, and the kept reproducers, stay as they were."""
    b = random.Random(m.seed * 4099 + 5)
    if b.random() >= 1 / 3:
        return
    own = ExprGen(b, m)
    for _ in range(b.randint(1, 2)):
        f = b.choice(["min", "max", "sign", "step", "clamp"])
        a = own.expr(1, {"q", "p", "qd", "t"})
        c = own.expr(1, {"q", "p"})
        if f in ("min", "max"):
            e = ("call", f, [a, c])
        elif f == "clamp":
            e = ("call", f, [("sub", a, c), num("-0.6"), num("0.8")])
        else:
            e = ("mul", c, ("call", f, [("sub", a, num(number_text(b, -0.5, 0.5)))]))
        m.terms.append(("force", b.choice(m.coords), e, False))
    if b.random() < 0.5:
        x = own.expr(1, {"q", "p"})
        m.terms.append(("potential", None, ("pow", ("call", "max", [num("0"), x]), num("2")), False))


def add_velocity_constraint(m, seed):
    """A quarter of the models with 2 or more coordinates and room for one
    more constraint get a velocity constraint, linear in the rates:
    c' + a(q, p) d' [+ k (e(q))'] = b(q, p[, t]).  Its own random stream,
    so the models without one stay what they were."""
    vr = random.Random(seed * 4649 + 29)
    n = len(m.coords)
    if n < 2 or vr.random() >= 0.25:
        return
    own = set()
    for kind, _, e, _ in m.terms:
        if kind == "constraint":  # each solved for its own coordinate: lhs = c + ...
            own.add(e[0][1][1])
    free = [c for c in m.coords if c not in own]
    if len(own) + 1 > n - 1 or not free:
        return
    g = ExprGen(vr, m)
    c = vr.choice(free)
    d = vr.choice([x for x in m.coords if x != c])
    lhs = ("add", ("rate", ("var", c)), ("mul", g.expr(1, {"q", "p"}), ("rate", ("var", d))))
    if vr.random() < 0.5:
        # a rate of an expression (chain rule), free of c so that the
        # coefficient of c' stays 1
        inner = substitute(g.expr(1, {"q", "p"}), c, num("0.5"))
        lhs = ("add", lhs, ("mul", num(number_text(vr, 0.1, 0.5)), ("rate", inner)))
    rhs = g.expr(1, {"q", "p"} | ({"t"} if vr.random() < 0.3 else set()))
    m.terms.append(("vconstraint", None, (lhs, rhs), False))


def generate(seed, max_coords=4):
    """The model for `seed` (deterministic: same seed, same model)."""
    rng = random.Random(seed)
    m = Model(seed)
    m.use_model_stmt = rng.random() < 0.8
    tricky = rng.random() < 0.3
    used = set()
    n = rng.randint(1, max_coords)
    m.coords = pick_names(rng, n, "q", used, tricky)
    g = ExprGen(rng, m)

    for name in pick_names(rng, rng.randint(1, 4), "k", used, tricky):
        if m.params and rng.random() < 0.25:
            # a default computed from earlier params and consts
            prev = rng.choice(m.params)[0]
            m.params.append((name, ("mul", num(number_text(rng, 0.5, 1.5)), ("var", prev))))
        else:
            m.params.append((name, num(number_text(rng, 0.5, 2.0))))
    for name in pick_names(rng, rng.randint(0, 2), "c", used, tricky):
        m.consts.append((name, number_text(rng, 0.5, 2.0)))
    m.inputs = pick_names(rng, rng.randint(0, 2), "u", used, tricky)
    q_only = {"q", "p"}
    for name in pick_names(rng, rng.randint(0, 2), "y", used, tricky):
        allow = set(q_only)
        if rng.random() < 0.3:
            allow.add("t")
        if m.lets:
            allow.add("let")
        e = g.expr(2, allow)
        if uses_time(e, m.timed_lets):
            m.timed_lets.add(name)
        m.lets.append((name, e))

    bodies = n <= 3 and rng.random() < 0.35
    # A quarter of the models with up to 4 coordinates put their bodies on
    # 4x4 dh chains instead.  The choice has its own random stream, so the
    # other seeds' models stay exactly what they were.
    chain = n <= 4 and random.Random(seed * 6151 + 11).random() < 0.25

    # Kinetic energy: one square per column of a lower-triangular L(q)
    # plus eps/2 |q'|^2, so M = L L^T + eps I is positive definite.
    for k in range(n):
        if rng.random() < 0.3:
            continue
        s = None
        for i in range(k, n):
            entry = g.expr(rng.randint(0, 2), {"q", "p", "qlet"})
            prod = ("mul", entry, ("rate", ("var", m.coords[i])))
            s = prod if s is None else ("add", s, prod)
        if rng.random() < 0.5:
            m.terms.append(("kinetic", None, ("mul", ("div", num("1"), num("2")), ("pow", s, num("2"))), False))
        else:
            m.terms.append(("kinetic", None, ("div", ("mul", s, s), num("2")), False))
    eps = rng.choice([("var", rng.choice(m.params)[0]), num(number_text(rng, 0.4, 1.5))])
    s = None
    for c in m.coords:
        sq = ("pow", ("rate", ("var", c)), num("2"))
        s = sq if s is None else ("add", s, sq)
    m.terms.append(("kinetic", None, ("mul", ("div", eps, num("2")), s), True))
    # Rates of lets and of parenthesized expressions (chain rule).
    for name, _ in m.lets:
        if name not in m.timed_lets and rng.random() < 0.5:
            w = rng.choice([("var", rng.choice(m.params)[0]), num(number_text(rng, 0.3, 2.0))])
            m.terms.append(("kinetic", None, ("mul", ("div", w, num("2")),
                                              ("pow", ("rate", ("var", name)), num("2"))), False))
    if rng.random() < 0.3:
        inner = g.expr(2, {"q", "p"})
        if not uses_coord(inner, m):
            # a rate of a param or const alone is an error in the language
            inner = ("mul", inner, ("var", rng.choice(m.coords)))
        if rng.random() < 0.4:
            # an explicit time dependence, additive so M stays free of t
            inner = ("add", inner, ("mul", num(number_text(rng, 0.2, 1.0)), ("call", "sin", [("t",)])))
        m.terms.append(("kinetic", None, ("mul", num("0.5"), ("pow", ("rate", inner), num("2"))), False))

    all_q = {"q", "p", "let", "t", "pi"}
    for _ in range(rng.randint(1, 4)):
        m.terms.append(("potential", None, g.expr(3, all_q), False))
    if rng.random() < 0.4:
        c = rng.choice(m.coords)
        m.terms.append(("lagrangian", None, ("mul", g.expr(2, all_q), ("rate", ("var", c))), False))
    if rng.random() < 0.2:
        m.terms.append(("lagrangian", None, g.expr(2, all_q), False))
    if rng.random() < 0.6:
        s = None
        for c in m.coords:
            if rng.random() < 0.6:
                coef = g.positive(1, {"q", "p"}) if rng.random() < 0.4 else ("var", rng.choice(m.params)[0])
                term = ("mul", coef, ("pow", ("rate", ("var", c)), num("2")))
                s = term if s is None else ("add", s, term)
        if s is not None:
            m.terms.append(("dissipation", None, ("div", s, num("2")), False))
    if rng.random() < 0.2 and n > 1:
        b = None
        for c in m.coords:
            term = ("mul", g.expr(1, {"q", "p"}), ("rate", ("var", c)))
            b = term if b is None else ("add", b, term)
        m.terms.append(("dissipation", None, ("mul", num("0.5"), ("pow", b, num("2"))), False))
    if chain:
        add_chain(rng, m, g, used)
    elif bodies:
        add_bodies(rng, m, g, used)
    if n >= 2 and rng.random() < 0.25:
        # Holonomic constraints, each solved for its own coordinate so the
        # constraint Jacobian has full rank at generic states.
        for c in rng.sample(m.coords, rng.randint(1, min(2, n - 1))):
            lhs = ("add", ("var", c), ("mul", num(number_text(rng, 0.1, 0.5)), g.expr(1, {"q", "p"})))
            rhs = g.expr(1, {"q", "p"} | ({"t"} if rng.random() < 0.3 else set()))
            # c stays out of the right side, or `q2 + 0.5 = q2` could
            # cancel it and leave a constraint with a zero Jacobian.
            rhs = substitute(rhs, c, num("0.5"))
            m.terms.append(("constraint", None, (lhs, rhs), False))
    add_velocity_constraint(m, seed)
    everything = {"q", "p", "let", "t", "u", "qd"}
    for _ in range(rng.randint(0, 3)):
        c = rng.choice(m.coords)
        e = g.expr(2, everything)
        if m.inputs and rng.random() < 0.7:
            e = ("add", e, ("mul", ("var", rng.choice(m.inputs)), g.expr(1, {"q", "p"})))
        m.terms.append(("force", c, e, False))
    add_branch_terms(m, g)
    # Outputs of anything, and a default initial state for some coordinates.
    for name in pick_names(rng, rng.randint(0, 2), "out", used, tricky):
        m.outputs.append((name, g.expr(2, everything)))
    for c in m.coords:
        if rng.random() < 0.3:
            m.initial.append((c, False, number_text(rng, 0.1, 1.0)))
        if rng.random() < 0.2:
            m.initial.append((c, True, number_text(rng, 0.1, 1.0)))
    return m


# ---------------------------------------------------------------- printing

PREC = {"add": 1, "sub": 1, "mul": 2, "div": 2, "neg": 3, "pow": 4, "rate": 5}


def expr_to_eom(e, rng=None, min_prec=0):
    """Print with the fewest parentheses the precedence rules allow, plus a
    few redundant ones (rng) to exercise the parser both ways."""
    kind = e[0]
    if kind == "num":
        s, p = e[1], 6
    elif kind == "var":
        s, p = e[1], 6
    elif kind == "t":
        s, p = "t", 6
    elif kind == "pi":
        s, p = "pi", 6
    elif kind == "call":
        s, p = "%s(%s)" % (e[1], ", ".join(expr_to_eom(a, rng) for a in e[2])), 6
    elif kind == "vec":
        s, p = "[%s]" % ", ".join(expr_to_eom(a, rng) for a in e[1]), 6
    elif kind == "mat":
        s, p = "[%s]" % ", ".join("[%s]" % ", ".join(expr_to_eom(a, rng) for a in row) for row in e[1]), 6
    elif kind == "index":
        # indexing needs the bracket right after a name: `r1[2]`
        s, p = "%s[%d]" % (e[1][1], e[2]), 6
    elif kind == "rate":
        inner = e[1]
        body = expr_to_eom(inner, rng, 6) if inner[0] == "var" else "(%s)" % expr_to_eom(inner, rng)
        s, p = body + "'", 5
    elif kind == "neg":
        # ^ binds tighter than unary minus: -x^2 is -(x^2)
        s, p = "-" + expr_to_eom(e[1], rng, 4), 3
    elif kind == "pow":
        # right-associative: a^b^c is a^(b^c); the base must be a primary
        s, p = expr_to_eom(e[1], rng, 5) + "^" + expr_to_eom(e[2], rng, 4), 4
    else:
        p = PREC[kind]
        op = {"add": " + ", "sub": " - ", "mul": "*", "div": "/"}[kind]
        left = expr_to_eom(e[1], rng, p)
        right = expr_to_eom(e[2], rng, p + 1)
        s = left + op + right
    # a unary minus is only written first in an operand of + or - (left side)
    needs = p < min_prec or (kind == "neg" and min_prec > 1)
    if needs or (rng is not None and p < 6 and rng.random() < 0.08):
        return "(" + s + ")"
    return s


def to_eom(m, keep=None):
    """The model's .eom text.  keep: indices of m.terms to write (all if None)."""
    rng = random.Random(m.seed * 7919 + 1)
    out = ["# differential-test model, seed %d (tests/differential/eomgen.py)" % m.seed]
    if m.use_model_stmt:
        out.append("model %s" % m.name)
    out.append("coord %s" % ", ".join(m.coords))
    for name, default in m.params:
        out.append("param %s = %s" % (name, expr_to_eom(default, rng)))
    for name, text in m.consts:
        out.append("const %s = %s" % (name, text))
    if m.inputs:
        out.append("input %s" % ", ".join(m.inputs))
    for name, e in m.lets:
        out.append("let %s = %s" % (name, expr_to_eom(e, rng)))
    for i, (kind, target, e, _) in enumerate(m.terms):
        if keep is not None and i not in keep:
            continue
        if kind == "force":
            out.append("force %s = %s" % (target, expr_to_eom(e, rng)))
        elif kind == "body":
            mass, pos, orient, inertia = e
            line = "body %s mass %s at %s" % (target, expr_to_eom(mass, rng), expr_to_eom(pos, rng))
            if orient is not None:
                line += " orient " + expr_to_eom(orient, rng)
            if inertia is not None:
                line += " inertia " + expr_to_eom(inertia, rng)
            out.append(line)
        elif kind in ("constraint", "vconstraint"):
            out.append("constraint %s = %s" % (expr_to_eom(e[0], rng), expr_to_eom(e[1], rng)))
        elif kind == "force_at":
            out.append("force %s at %s" % (expr_to_eom(e[0], rng), expr_to_eom(e[1], rng)))
        elif kind == "torque_on":
            out.append("torque %s on %s" % (expr_to_eom(e[0], rng), expr_to_eom(e[1], rng)))
        else:
            out.append("%s %s" % (kind, expr_to_eom(e, rng)))
    for name, e in m.outputs:
        out.append("output %s = %s" % (name, expr_to_eom(e, rng)))
    for c, rate, text in m.initial:
        out.append("initial %s%s = %s" % (c, "'" if rate else "", text))
    return "\n".join(out) + "\n"
