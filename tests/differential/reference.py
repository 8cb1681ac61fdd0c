"""reference.py — the independent side of the differential tests: SymPy core.

From the same energy expressions eomgen.py prints as .eom text, derive the
equations of motion with nothing but sympy.diff, the Euler–Lagrange equations
with Rayleigh dissipation

    d/dt (dL/dq'_i) - dL/dq_i + dD/dq'_i = Q_i,   L = T - V + (lagrangian terms)

(Goldstein, Poole, Safko, "Classical Mechanics", 3rd ed., 2002, sections 1.4
and 1.5, eq. 1.70 for the dissipation function; section numbers from memory),
where d/dt of g(q, q', t) is expanded by the chain rule
sum_k dg/dq_k q'_k + dg/dq'_k q''_k + dg/dt.  M is the coefficient of q'' and
f the rest, moved to the right-hand side, so M q'' = f.

Values are evaluated with mpmath at 40 significant digits, so the reference's
own rounding is far below the 1e-10 tolerance.  The Jacobians of the state
derivative come from central differences in that precision (step 1e-15,
truncation error ~1e-30), a method that shares nothing with eomc's symbolic
Jacobians.
"""

import random

import mpmath
import sympy

DPS = 40


def rotation(axis):
    """Right-handed rotation by angle a about a coordinate axis (common practice)."""
    def r(a):
        c, s = sympy.cos(a), sympy.sin(a)
        if axis == "x":
            return sympy.Matrix([[1, 0, 0], [0, c, -s], [0, s, c]])
        if axis == "y":
            return sympy.Matrix([[c, 0, s], [0, 1, 0], [-s, 0, c]])
        return sympy.Matrix([[c, -s, 0], [s, c, 0], [0, 0, 1]])
    return r


def homogeneous(R, p):
    """The 4x4 transform [[R, p], [0 0 0, 1]]."""
    T = sympy.eye(4)
    T[:3, :3] = R
    T[:3, 3] = p
    return T


def denavit_hartenberg(theta, d, a, alpha):
    """Standard Denavit-Hartenberg transform, built as the product
    rotz(theta) transl(0, 0, d) transl(a, 0, 0) rotx(alpha) of explicit 4x4
    matrices (J. Denavit, R. S. Hartenberg, "A kinematic notation for
    lower-pair mechanisms based on matrices", J. Appl. Mech. 1955; M. W.
    Spong, S. Hutchinson, M. Vidyasagar, "Robot Modeling and Control",
    2006, section 3.2, eq. 3.10)."""
    zero, I3 = sympy.zeros(3, 1), sympy.eye(3)
    return (homogeneous(rotation("z")(theta), zero) * homogeneous(I3, sympy.Matrix([0, 0, d])) *
            homogeneous(I3, sympy.Matrix([a, 0, 0])) * homogeneous(rotation("x")(alpha), zero))


MATRIX_FUNCTIONS = {
    "rotx": rotation("x"), "roty": rotation("y"), "rotz": rotation("z"),
    "dh": denavit_hartenberg,
    "pos": lambda T: T[:3, 3],
    "rot": lambda T: T[:3, :3],
    "diag": lambda *a: sympy.diag(*a),
    "dot": lambda a, b: (a.T * b)[0],
    "cross": lambda a, b: a.cross(b),
    "norm": lambda a: sympy.sqrt((a.T * a)[0]),
    "transpose": lambda a: a.T,
}


def without_delta(x):
    """abs' = sign and sign' = 2 DiracDelta, step' = DiracDelta, and the
    branches of min/max: zero where the generator evaluates (every abs
    argument stays >= 0.2; the sampled points are off the switches)."""
    return x.replace(sympy.DiracDelta, lambda *a: sympy.Integer(0))


class Bundle:
    """Named lists of expressions compiled into one mpmath function, so that
    their common subexpressions are computed once."""

    def __init__(self, args, named):
        self.names = [(name, len(exprs)) for name, exprs in named]
        flat = [without_delta(sympy.sympify(x)) for _, exprs in named for x in exprs]
        self.fn = sympy.lambdify(args, flat, modules="mpmath", cse=True)

    def __call__(self, args):
        flat, out, k = self.fn(*args), {}, 0
        for name, count in self.names:
            out[name] = flat[k:k + count]
            k += count
        return out


class Reference:
    """M, f, T, V of one model as SymPy expressions and mpmath functions."""

    def __init__(self, m, keep=None):
        self.m = m
        n = len(m.coords)
        self.n = n
        self.q = sympy.symbols("q0:%d" % n, real=True)
        self.qd = sympy.symbols("qd0:%d" % n, real=True)
        self.t = sympy.Symbol("t", real=True)
        self.p = sympy.symbols("p0:%d" % len(m.params), real=True) if m.params else ()
        self.u = sympy.symbols("u0:%d" % len(m.inputs), real=True) if m.inputs else ()
        self.env = {}
        for i, c in enumerate(m.coords):
            self.env[c] = self.q[i]
        for i, (name, _) in enumerate(m.params):
            self.env[name] = self.p[i]
        for name, text in m.consts:
            self.env[name] = sympy.Rational(text)
        for i, name in enumerate(m.inputs):
            self.env[name] = self.u[i]
        for name, e in m.lets:
            self.env[name] = self.to_sympy(e)
        T = V = Lx = D = sympy.Integer(0)
        Q = [sympy.Integer(0)] * n
        bodies = []
        phi, vphi = [], []
        for idx, (kind, target, e, _) in enumerate(m.terms):
            if keep is not None and idx not in keep:
                continue
            if kind == "constraint":
                phi.append(self.to_sympy(e[0]) - self.to_sympy(e[1]))
                continue
            if kind == "vconstraint":
                vphi.append(self.to_sympy(e[0]) - self.to_sympy(e[1]))
                continue
            if kind in ("body", "gravity", "force_at", "torque_on"):
                bodies.append((kind, target, e))
                continue
            x = self.to_sympy(e)
            if kind == "kinetic":
                T += x
            elif kind == "potential":
                V += x
            elif kind == "lagrangian":
                Lx += x
            elif kind == "dissipation":
                D += x
            elif kind == "force":
                i = m.coords.index(target)
                Q[i] += x
        T, V, Q = self.rigid_bodies(bodies, T, V, Q)
        self.T, self.V = T, V
        self.timed_energy = self.t in (T.free_symbols | V.free_symbols)
        self.M, self.f, momenta = self.euler_lagrange(T - V + Lx, D, Q)
        self.control = self.control_pieces(T - V + Lx, D, Q, momenta)
        self.param_defaults = self.eval_defaults()
        self.outputs = [self.to_sympy(e) for _, e in m.outputs]
        self.q0 = [0.0] * n
        self.qd0 = [0.0] * n
        for c, rate, text in m.initial:
            (self.qd0 if rate else self.q0)[m.coords.index(c)] = float(text)
        args = list(self.q) + list(self.qd) + [self.t] + list(self.u) + list(self.p)
        # Two numeric functions with common subexpressions shared (SymPy's
        # cse; mpmath would otherwise redo each cos(q1) of a chain hundreds
        # of times): M and f, evaluated again and again for the Jacobians,
        # and everything else, once per sample point.
        self.fn_Mf = Bundle(args, [("M", [x for row in self.M for x in row]), ("f", self.f)])
        self.values = Bundle(args, [("TV", [self.T, self.V]), ("y", self.outputs)] + self.control)
        self.constraints(phi, args)
        self.velocity_constraints(vphi, args)

    def rigid_bodies(self, stmts, T, V, Q):
        """Energies and generalized forces of `body`, `gravity`, `force at`
        and `torque on`.  A body at P with orientation R: T = 1/2 m P'.P'
        + 1/2 w.(I w) with w the body-frame angular velocity, the vee of the
        skew-symmetric R^T R' (world frame: vee of R' R^T); gravity G adds
        -m G.P; a force F at P adds F.dP/dq_i to Q_i and a torque tau on R
        adds tau.(d w_world/dq'_i) (virtual work).  R. M. Murray, Z. Li,
        S. S. Sastry, "A Mathematical Introduction to Robotic Manipulation",
        1994, section 2.4 (rigid-body velocity; from memory)."""
        def vee(S):
            return sympy.Matrix([S[2, 1], S[0, 2], S[1, 0]])
        masses = []
        for kind, target, e in stmts:
            if kind == "body":
                mass, pos, orient, inertia = e
                m_, P = self.to_sympy(mass), self.to_sympy(pos)
                Pd = P.applyfunc(self.rate)
                T += m_ * (Pd.T * Pd)[0] / 2
                if orient is not None:
                    R = self.to_sympy(orient)
                    w = vee(R.T * R.applyfunc(self.rate))
                    I = self.to_sympy(inertia) if inertia is not None else sympy.zeros(3, 3)
                    T += (w.T * I * w)[0] / 2
                masses.append((m_, P))
        for kind, target, e in stmts:
            if kind == "gravity":
                G = self.to_sympy(e)
                for m_, P in masses:
                    V += -m_ * (G.T * P)[0]
            elif kind == "force_at":
                F, P = self.to_sympy(e[0]), self.to_sympy(e[1])
                Q = [Q[i] + (F.T * P.diff(self.q[i]))[0] for i in range(self.n)]
            elif kind == "torque_on":
                tau, R = self.to_sympy(e[0]), self.to_sympy(e[1])
                w = vee(R.applyfunc(self.rate) * R.T)
                Q = [Q[i] + (tau.T * w.diff(self.qd[i]))[0] for i in range(self.n)]
        return T, V, Q

    def control_pieces(self, L, D, Q, pm):
        """Momenta dL/dq', the energy function h = q'.dL/dq' - L, g = dV/dq
        with V = -L(q' = 0), the power balance dh/dt = q'.(Q - dD/dq') -
        dL/dt (Goldstein et al. 2002, section 2.7, from memory), and
        Q - dD/dq' (minus f: C q' + g must equal it when the split exists).
        pm: the momenta, from euler_lagrange."""
        n = self.n
        self.timed_L = self.t in L.free_symbols
        h = sum((self.qd[i] * pm[i] for i in range(n)), -L)
        V = -L.subs({s: 0 for s in self.qd})
        g = [sympy.diff(V, self.q[i]) for i in range(n)]
        dD = [sympy.diff(D, self.qd[i]) for i in range(n)]
        applied = [Q[i] - dD[i] for i in range(n)]
        power = sum((self.qd[i] * applied[i] for i in range(n)), -sympy.diff(L, self.t))
        return [("pm", pm), ("h", [h]), ("g", g), ("applied", applied), ("power", [power])]

    def christoffel(self, pt):
        """C_kj = sum_i 1/2 (dM_kj/dq_i + dM_ki/dq_j - dM_ij/dq_k) q'_i
        (Spong, Hutchinson, Vidyasagar, "Robot Modeling and Control", 2006,
        section 7.3), with dM/dq by central differences at 40 digits."""
        n, h = self.n, mpmath.mpf("1e-15")
        dM = []
        for i in range(n):
            qp = [mpmath.mpf(x) for x in pt["q"]]
            qm = list(qp)
            qp[i] += h
            qm[i] -= h
            Mp = self.mass_matrix(self.fn_Mf(self.args(pt, q=qp)))
            Mm = self.mass_matrix(self.fn_Mf(self.args(pt, q=qm)))
            dM.append((Mp - Mm) / (2 * h))
        qd = [mpmath.mpf(x) for x in pt["qd"]]
        return [sum(((dM[i][k, j] + dM[j][k, i] - dM[k][i, j]) * qd[i] / 2 for i in range(n)), mpmath.mpf(0))
                for k in range(n) for j in range(n)]

    def constraints(self, phi, args):
        """phi = lhs - rhs, G = dphi/dq, and gamma with G q'' = gamma from
        phi'' = 0: with a = G q' + dphi/dt, gamma = -(da/dq q' + da/dt).
        The constrained accelerations solve M q'' = f + G^T lambda, G q'' =
        gamma (Lagrange multipliers; Goldstein et al. 2002, section 2.4,
        from memory)."""
        self.nc = len(phi)
        G = [[sympy.diff(c, self.q[j]) for j in range(self.n)] for c in phi]
        gamma = []
        for i, c in enumerate(phi):
            a = sum((G[i][j] * self.qd[j] for j in range(self.n)), sympy.diff(c, self.t))
            gamma.append(without_delta(-self.rate(a)))
        # P_constraint has no t argument: time-dependent phi is not
        # comparable (eomc documents NaN for it); G and gamma still are.
        self.timed_phi = any(self.t in c.free_symbols for c in phi)
        # likewise P_constraint_jacobian: G of a constraint like
        # q = t/(2 + cos q) depends on t (NaN documented).
        self.timed_G = any(self.t in x.free_symbols for row in G for x in row)
        self.fn_phi = sympy.lambdify(args, phi, modules="mpmath", cse=True)
        G = [[without_delta(x) for x in row] for row in G]
        self.fn_G = sympy.lambdify(args, G, modules="mpmath", cse=True)
        self.fn_gamma = sympy.lambdify(args, gamma, modules="mpmath", cse=True)
        # P_constraint_at takes t: phi, G and dphi/dt, time-dependent or not
        self.fn_phi_t = sympy.lambdify(args, [without_delta(sympy.diff(c, self.t)) for c in phi],
                                       modules="mpmath", cse=True)

    def velocity_constraints(self, vphi, args):
        """c(t, q, q') = lhs - rhs, linear in q': A = dc/dq', b = -c(q' = 0)
        and gamma with A q'' = gamma from c' = 0: gamma = -(dc/dt + dc/dq q')
        (A does not depend on q').  Their multipliers join the position
        constraints' in M q'' = f + G^T lambda + A^T mu (Neimark & Fufaev,
        Dynamics of Nonholonomic Systems, 1972, ch. III; from memory)."""
        self.nvc = len(vphi)
        A = [[sympy.diff(c, self.qd[j]) for j in range(self.n)] for c in vphi]
        at_rest = {v: 0 for v in self.qd}
        b = [-c.subs(at_rest) for c in vphi]
        gamma = []
        for c in vphi:
            d = sympy.diff(c, self.t)
            for i in range(self.n):
                d += sympy.diff(c, self.q[i]) * self.qd[i]
            gamma.append(without_delta(-d))
        self.fn_vc = sympy.lambdify(args, [x for row in A for x in row] + b + gamma,
                                    modules="mpmath", cse=True)

    def rate(self, x):
        """Total time derivative of an expression free of rates."""
        d = sympy.diff(x, self.t)
        for i in range(self.n):
            d += sympy.diff(x, self.q[i]) * self.qd[i]
        return d

    def to_sympy(self, e):
        k = e[0]
        if k == "num":
            return sympy.Rational(e[1])
        if k == "var":
            return self.env[e[1]]
        if k == "t":
            return self.t
        if k == "pi":
            return sympy.pi
        if k == "rate":
            inner = e[1]
            if inner[0] == "var" and inner[1] in self.m.coords:
                return self.qd[self.m.coords.index(inner[1])]
            x = self.to_sympy(inner)
            return x.applyfunc(self.rate) if isinstance(x, sympy.MatrixBase) else self.rate(x)
        if k == "vec":
            return sympy.Matrix([self.to_sympy(a) for a in e[1]])
        if k == "mat":
            return sympy.Matrix([[self.to_sympy(a) for a in row] for row in e[1]])
        if k == "index":
            return self.to_sympy(e[1])[e[2] - 1]
        if k == "neg":
            return -self.to_sympy(e[1])
        if k == "call" and e[1] in MATRIX_FUNCTIONS:
            return MATRIX_FUNCTIONS[e[1]](*[self.to_sympy(a) for a in e[2]])
        if k == "call":
            args = [self.to_sympy(a) for a in e[2]]
            fn = {"sin": sympy.sin, "cos": sympy.cos, "tan": sympy.tan, "asin": sympy.asin,
                  "acos": sympy.acos, "atan": sympy.atan, "atan2": sympy.atan2,
                  "exp": sympy.exp, "log": sympy.log, "sqrt": sympy.sqrt, "abs": sympy.Abs,
                  "sinh": sympy.sinh, "cosh": sympy.cosh, "tanh": sympy.tanh,
                  "min": sympy.Min, "max": sympy.Max, "sign": sympy.sign,
                  "step": lambda x: sympy.Heaviside(x, 0),
                  "clamp": lambda x, lo, hi: sympy.Min(sympy.Max(x, lo), hi)}[e[1]]
            return fn(*args)
        a, b = self.to_sympy(e[1]), self.to_sympy(e[2])
        if k == "add":
            return a + b
        if k == "sub":
            return a - b
        if k == "mul":
            return a * b
        if k == "div":
            return a / b
        if k == "pow":
            return a ** b
        raise ValueError("unknown node %r" % (k,))

    def euler_lagrange(self, L, D, Q):
        """M and f of d/dt(dL/dq'_i) - dL/dq_i + dD/dq'_i = Q_i.

        With p_i = dL/dq'_i, the chain rule gives d/dt p_i =
        sum_j dp_i/dq'_j q''_j + sum_k dp_i/dq_k q'_k + dp_i/dt, so
        M_ij = dp_i/dq'_j and f_i = dL/dq_i - sum_k dp_i/dq_k q'_k - dp_i/dt
        - dD/dq'_i + Q_i."""
        n = self.n
        M, f, momenta = [], [], []
        for i in range(n):
            pi = sympy.diff(L, self.qd[i])
            momenta.append(pi)
            M.append([sympy.diff(pi, self.qd[j]) for j in range(n)])
            fi = sympy.diff(L, self.q[i]) - sympy.diff(pi, self.t) - sympy.diff(D, self.qd[i]) + Q[i]
            for k in range(n):
                fi -= sympy.diff(pi, self.q[k]) * self.qd[k]
            f.append(fi)
        M = [[without_delta(x) for x in row] for row in M]
        f = [without_delta(x) for x in f]
        for row in M:
            for x in row:
                # the generator only writes energies quadratic in the rates
                assert not (x.free_symbols & set(self.qd)), x
        # M may mention t without depending on it: a chain whose first step
        # turns with t (a rigid motion of the base frame) leaves the part of
        # T quadratic in q' unchanged, but SymPy does not cancel it.  P_mass
        # has no t argument either; were M to depend on t after all, eomc's
        # P_mass writes NaN (documented) and the comparison fails.
        M = [[x.subs(self.t, 0) for x in row] for row in M]
        return M, f, momenta

    def eval_defaults(self):
        """Param defaults: numbers or expressions of earlier params."""
        vals = {}
        out = []
        for name, e in self.m.params:
            x = self.to_sympy(e).subs(vals)
            v = float(x.evalf(30))
            vals[self.env[name]] = sympy.Float(v, 30)
            out.append(v)
        return out

    def eval_derived(self, p):
        """P_derived_params(p, NULL): each param whose default reads other
        params is recomputed from the current values, in declaration order;
        the others keep their value in p."""
        vals = {}
        out = []
        for (name, e), v in zip(self.m.params, p):
            x = self.to_sympy(e)
            if any(s in self.p for s in x.free_symbols):
                v = float(x.subs(vals).evalf(30))
            vals[self.env[name]] = sympy.Float(v, 30)
            out.append(v)
        return out

    # ------------------------------------------------------------ numerics

    def args(self, pt, q=None, qd=None, u=None):
        q = pt["q"] if q is None else q
        qd = pt["qd"] if qd is None else qd
        u = pt["u"] if u is None else u
        return [mpmath.mpf(x) for x in list(q) + list(qd) + [pt["t"]] + list(u) + list(pt["p"])]

    def mass_matrix(self, val):
        n = self.n
        return mpmath.matrix([val["M"][i * n:(i + 1) * n] for i in range(n)])

    def accel(self, pt, q=None, qd=None, u=None):
        val = self.fn_Mf(self.args(pt, q, qd, u))
        M, f = self.mass_matrix(val), mpmath.matrix(val["f"])
        return M, f, mpmath.lu_solve(M, f)

    def evaluate(self, pt):
        """Every reference value at one sample point (floats)."""
        with mpmath.workdps(DPS):
            n, nu = self.n, len(self.u)
            M, f, qdd = self.accel(pt)
            val = self.values(self.args(pt))
            T, V = val["TV"]
            fu0 = mpmath.matrix(self.fn_Mf(self.args(pt, u=[0] * nu))["f"])
            inv = M * mpmath.matrix(pt["qdd"]) - fu0
            # d qdd / d(q, qd, u) by central differences
            h = mpmath.mpf("1e-15")
            cols = []
            for j in range(2 * n + nu):
                vec = [list(pt["q"]), list(pt["qd"]), list(pt["u"])]
                which, idx = (0, j) if j < n else (1, j - n) if j < 2 * n else (2, j - 2 * n)
                plus = [list(v) for v in vec]
                minus = [list(v) for v in vec]
                plus[which][idx] = mpmath.mpf(plus[which][idx]) + h
                minus[which][idx] = mpmath.mpf(minus[which][idx]) - h
                ap = self.accel(pt, *plus)[2]
                am = self.accel(pt, *minus)[2]
                cols.append([(ap[i] - am[i]) / (2 * h) for i in range(n)])
            N = 2 * n
            A = [[0.0] * N for _ in range(N)]
            B = [[0.0] * nu for _ in range(N)]
            for i in range(n):
                A[i][n + i] = 1.0
                for j in range(N):
                    A[n + i][j] = float(cols[j][i])
                for j in range(nu):
                    B[n + i][j] = float(cols[N + j][i])
            out = {}
            if self.nc or self.nvc:
                a = self.args(pt)
                nc, nvc = self.nc, self.nvc
                nt = nc + nvc
                # rows of the position constraints' G, then the velocity ones' A
                vc = self.fn_vc(*a) if nvc else []
                H = mpmath.matrix(nt, n)
                rhs = mpmath.matrix(nt, 1)
                if nc:
                    G = mpmath.matrix(self.fn_G(*a))
                    gamma = self.fn_gamma(*a)
                    for i in range(nc):
                        rhs[i] = gamma[i]
                        for j in range(n):
                            H[i, j] = G[i, j]
                for i in range(nvc):
                    rhs[nc + i] = vc[nvc * n + nvc + i]
                    for j in range(n):
                        H[nc + i, j] = vc[i * n + j]
                K = mpmath.matrix(n + nt, n + nt)
                b = mpmath.matrix(n + nt, 1)
                for i in range(n):
                    b[i] = f[i]
                    for j in range(n):
                        K[i, j] = M[i, j]
                    for j in range(nt):
                        K[i, n + j] = -H[j, i]
                for i in range(nt):
                    b[n + i] = rhs[i]
                    for j in range(n):
                        K[n + i, j] = H[i, j]
                sol = mpmath.lu_solve(K, b)
                out = {
                    "accel_c": [float(sol[i]) for i in range(n)],
                    "lambda": [float(sol[n + i]) for i in range(nt)],
                }
                if nc:
                    out.update({
                        "phi": None if self.timed_phi else [float(v) for v in self.fn_phi(*a)],
                        "conjac": None if self.timed_G else [float(G[i, j]) for i in range(nc) for j in range(n)],
                        "phi_at": [float(v) for v in self.fn_phi(*a)],
                        "conjac_at": [float(G[i, j]) for i in range(nc) for j in range(n)],
                        "phi_t_at": [float(v) for v in self.fn_phi_t(*a)],
                    })
                if nvc:
                    out.update({
                        "vc_A": [float(x) for x in vc[:nvc * n]],
                        "vc_b": [float(x) for x in vc[nvc * n:nvc * n + nvc]],
                        "vc_gamma": [float(x) for x in vc[nvc * n + nvc:]],
                    })
            return dict(out, **{
                "mass": [float(M[i, j]) for i in range(n) for j in range(n)],
                "forcing": [float(f[i]) for i in range(n)],
                "accel": [float(qdd[i]) for i in range(n)],
                # P_energy has no t argument: energies that depend on time
                # are not comparable (eomc documents NaN for them).
                "energy": None if self.timed_energy else [float(T), float(V)],
                "inverse": [float(inv[i]) for i in range(n)],
                "rhs": [float(x) for x in pt["qd"]] + [float(qdd[i]) for i in range(n)],
                "jacA": [x for row in A for x in row],
                "jacB": [x for row in B for x in row],
                "defaults": list(self.param_defaults),
                "derived": self.eval_derived(pt["p"]),
                "outputs": [float(y) for y in val["y"]],
                "initial": list(self.q0) + list(self.qd0),
                # P_momenta/P_hamiltonian have no t argument: NaN when L has t.
                "momenta": None if self.timed_L else [float(v) for v in val["pm"]],
                "hamiltonian": None if self.timed_L else [float(val["h"][0])],
                "split_g": [float(v) for v in val["g"]],
                "split_C": [float(v) for v in self.christoffel(pt)],
                "split_resid": [float(val["applied"][i] - f[i]) for i in range(n)],
                "power": float(val["power"][0]),
            })


def sample_points(m, count, seed):
    """Random states, inputs and params inside the generator's safe domain."""
    rng = random.Random(seed * 104729 + 17)
    n, nu, npar = len(m.coords), len(m.inputs), len(m.params)
    pts = []
    for _ in range(count):
        pts.append({
            "t": round(rng.uniform(0, 3), 6),
            "q": [round(rng.uniform(-1.5, 1.5), 6) for _ in range(n)],
            "qd": [round(rng.uniform(-2, 2), 6) for _ in range(n)],
            "qdd": [round(rng.uniform(-2, 2), 6) for _ in range(n)],
            "u": [round(rng.uniform(-2, 2), 6) for _ in range(nu)],
            "p": [round(rng.uniform(0.5, 2), 6) for _ in range(npar)],
        })
    return pts
