"""Inverse dynamics of one robot derived symbolically with sympy and emitted as C.

This is the yardstick the benchmarks hold ffwd's recursive code against: the classic
"symbolic" approach, where the robot's numbers are baked into closed-form expressions
of q, qd, qdd, common subexpressions are pulled out (sympy.cse) and the result is
printed as straight-line C.

Method: the recursive Newton-Euler equations in 3-D vector form (e.g. Siciliano et al.
2009, Robotics: Modelling, Planning and Control, sec 7.5, from memory), run on sympy
expressions instead of numbers, so every torque ends up as one expression tree:

  forward, body i with parent p, R_i the rotation of frame i in frame p (q included):
    w_i   = R_i^T w_p + z_i qd_i                        (revolute; prismatic: R_i^T w_p)
    dw_i  = R_i^T dw_p + z_i qdd_i + (R_i^T w_p) x z_i qd_i
    a_i   = R_i^T (a_p + dw_p x p_i + w_p x (w_p x p_i))
            (prismatic adds 2 w_i x z_i qd_i + z_i qdd_i)
  per body with the 10 parameters (m, h = m c, I_O about the frame origin):
    F_i = m a_i + dw_i x h + w_i x (w_i x h)
    N_i = I_O dw_i + w_i x (I_O w_i) + h x a_i
  backward:
    f_i = F_i + sum_c R_c f_c,   n_i = N_i + sum_c (R_c n_c + p_c x R_c f_c)
    tau_i = z_i . n_i (revolute) or z_i . f_i (prismatic)
  gravity enters as the base acceleration a_0 = -g.

The drive terms (armature*qdd + viscous*qd + coulomb*clamp(qd/band, -1, 1)) are added
in plain C after the symbolic part, exactly as ffwd.h defines them.

Numbers of the model within 1e-12 of 0 or +-1 are made exact so that sympy drops the
terms they kill, as a hand-made symbolic model would.
"""
from __future__ import annotations

import time

import numpy as np
import sympy as sp
from sympy.printing.c import C99CodePrinter

_EXACT_TOL = 1e-12


def _num(x):
    """A model number as a sympy number, with 0 and +-1 made exact."""
    x = float(x)
    if abs(x) < _EXACT_TOL:
        return sp.Integer(0)
    if abs(x - 1.0) < _EXACT_TOL:
        return sp.Integer(1)
    if abs(x + 1.0) < _EXACT_TOL:
        return sp.Integer(-1)
    return sp.Float(x, 17)


def _mat(a):
    a = np.asarray(a, dtype=float)
    return sp.Matrix(a.shape[0], a.shape[1] if a.ndim == 2 else 1,
                     [_num(v) for v in a.ravel()])


def _axis_rotation(axis, s, c):
    """Rodrigues: rotation by the angle with sine s, cosine c about the unit `axis`."""
    k = _mat(axis)
    K = sp.Matrix([[0, -k[2], k[1]], [k[2], 0, -k[0]], [-k[1], k[0], 0]])
    return sp.eye(3) + s * K + (1 - c) * (K * K)


def _cross(a, b):
    return a.cross(b)


class _Tape:
    """Names the intermediate results of the recursion (t0, t1, ...) when `on`.

    Without it every torque is one expression tree, which grows so fast with the number
    of joints that sympy's cse needs minutes from 4-5 joints of general geometry on; with
    it each vector component of each step is a new symbol, as symbolic Newton-Euler code
    generators do, while terms killed by zeros and ones of the model still vanish."""

    def __init__(self, on):
        self.on = on
        self.defs = []

    def bind(self, expr):
        if not self.on or expr.is_Number or expr.is_Symbol:
            return expr
        if expr.is_Mul and len(expr.args) == 2 and expr.args[0].is_Number and expr.args[1].is_Symbol:
            return expr
        t = sp.Symbol(f"t{len(self.defs)}")
        self.defs.append((t, expr))
        return t

    def vec(self, v):
        return sp.Matrix([self.bind(x) for x in v])

    def mat(self, M):
        return M.applyfunc(self.bind)


def derive(robot, atomize=True):
    """Symbolic rigid-body joint torques of `robot` (an ffwd.Robot).

    Returns (exprs, symbols, defs): exprs is a list of dof sympy expressions (no drive
    terms), symbols a dict with lists 'q', 'qd', 'qdd', 's', 'c' (s[i], c[i] stand for
    sin q_i, cos q_i of revolute joints; None for prismatic ones), defs the list of
    (symbol, expression) intermediate results the exprs refer to (empty unless
    `atomize`), in order of definition."""
    tape = _Tape(atomize)
    bind = tape.vec
    n = robot.dof
    q = sp.symbols(f"q0:{n}")
    qd = sp.symbols(f"qd0:{n}")
    qdd = sp.symbols(f"qdd0:{n}")
    s = [sp.Symbol(f"s{i}") if j.type == "revolute" else None for i, j in enumerate(robot.joints)]
    c = [sp.Symbol(f"c{i}") if j.type == "revolute" else None for i, j in enumerate(robot.joints)]
    params = robot.body_params()

    zero = sp.zeros(3, 1)
    g = _mat(robot.gravity)
    R, P, Z, w, dw, a = [], [], [], [], [], []
    for i, joint in enumerate(robot.joints):
        z = _mat(joint.axis)
        R0 = _mat(joint.rotation)
        p0 = _mat(joint.translation)
        if joint.type == "revolute":
            Ri = tape.mat(R0 * _axis_rotation(joint.axis, s[i], c[i]))
            pi = p0
        else:
            Ri = R0
            pi = bind(p0 + R0 * z * q[i])
        if joint.parent < 0:
            wp, dwp, ap = zero, zero, -g
        else:
            wp, dwp, ap = w[joint.parent], dw[joint.parent], a[joint.parent]
        Rt = Ri.T
        wp_i = bind(Rt * wp)
        ai = bind(Rt * bind(ap + _cross(dwp, pi) + _cross(wp, bind(_cross(wp, pi)))))
        if joint.type == "revolute":
            wi = bind(wp_i + z * qd[i])
            dwi = bind(Rt * dwp + z * qdd[i] + _cross(wp_i, z * qd[i]))
        else:
            wi = wp_i
            dwi = bind(Rt * dwp)
            ai = bind(ai + 2 * _cross(wi, z * qd[i]) + z * qdd[i])
        R.append(Ri)
        P.append(pi)
        Z.append(z)
        w.append(wi)
        dw.append(dwi)
        a.append(ai)

    F, N = [], []
    for i in range(n):
        pr = params[i]
        m = _num(pr[0])
        h = sp.Matrix([_num(pr[1]), _num(pr[2]), _num(pr[3])])
        xx, xy, xz, yy, yz, zz = (_num(v) for v in pr[4:10])
        I_O = sp.Matrix([[xx, xy, xz], [xy, yy, yz], [xz, yz, zz]])
        F.append(bind(m * a[i] + _cross(dw[i], h) + _cross(w[i], bind(_cross(w[i], h)))))
        N.append(bind(I_O * dw[i] + _cross(w[i], bind(I_O * w[i])) + _cross(h, a[i])))

    f = list(F)
    nn = list(N)
    tau = [None] * n
    for i in reversed(range(n)):
        joint = robot.joints[i]
        tau[i] = (Z[i].T * (nn[i] if joint.type == "revolute" else f[i]))[0]
        p = joint.parent
        if p >= 0:
            Rf = bind(R[i] * f[i])
            f[p] = bind(f[p] + Rf)
            nn[p] = bind(nn[p] + R[i] * nn[i] + _cross(P[i], Rf))
    return tau, {"q": q, "qd": qd, "qdd": qdd, "s": s, "c": c}, tape.defs


class _Printer(C99CodePrinter):
    """C99 printer that writes small integer powers as products."""

    def _print_Pow(self, expr):
        base, e = expr.as_base_exp()
        if e.is_Integer and 2 <= int(e) <= 4:
            b = self.parenthesize(base, 100)
            return "*".join([b] * int(e))
        if e.is_Integer and int(e) == -1:
            return f"1.0/{self.parenthesize(base, 100)}"
        return super()._print_Pow(expr)


def _c_name(sym, symbols):
    name = sym.name
    for key, arr in (("qdd", "qdd"), ("qd", "qd"), ("q", "q")):
        if name.startswith(key) and name[len(key):].isdigit():
            return f"{arr}[{name[len(key):]}]"
    return name


def _ordered(outputs, defs):
    """Definitions needed by `outputs`, each after the ones it uses (no recursion)."""
    table = dict(defs)
    order, done = [], set()
    for out in outputs:
        stack = [(sym, False) for sym in out.free_symbols if sym in table]
        while stack:
            sym, expanded = stack.pop()
            if sym in done:
                continue
            if expanded:
                done.add(sym)
                order.append((sym, table[sym]))
                continue
            stack.append((sym, True))
            stack.extend((d, False) for d in table[sym].free_symbols
                         if d in table and d not in done)
    return order


def emit_c(robot, function="ffwd_sym_id", atomize=True):
    """C source of `void function(const double *q, const double *qd, const double *qdd,
    double *tau)` computing the inverse dynamics of `robot` (drive terms included).

    Returns (source, facts) with facts: derive_s, cse_s, temporaries, operations
    (sympy count_ops of the emitted expressions), lines, bytes."""
    t0 = time.perf_counter()
    exprs, symbols, defs = derive(robot, atomize)
    t1 = time.perf_counter()
    # common-subexpression elimination over the intermediate results and the torques
    # together; the intermediate names stay as they are (they are symbols to cse)
    names = [sym for sym, _ in defs]
    repl, reduced = sp.cse([e for _, e in defs] + list(exprs),
                           symbols=sp.numbered_symbols("x"), optimizations="basic")
    t2 = time.perf_counter()
    all_defs = list(repl) + list(zip(names, reduced[:len(names)]))
    taus = reduced[len(names):]
    needed = _ordered(taus, all_defs)

    printer = _Printer({"strict": False})
    mapping = {}
    for key in ("q", "qd", "qdd"):
        for sym in symbols[key]:
            mapping[sym] = sp.Symbol(_c_name(sym, symbols))

    def c(expr):
        return printer.doprint(expr.xreplace(mapping))

    used = set()
    for lhs, rhs in needed:
        used |= rhs.free_symbols
    for e in taus:
        used |= e.free_symbols

    n = robot.dof
    lines = [f"/* {function}: inverse dynamics of robot '{robot.name}' ({n} joints), generated by",
             " * bench/symbolic/newton_euler.py (sympy Newton-Euler + cse). Do not edit. */",
             "#include <math.h>",
             "",
             f"void {function}(const double *q, const double *qd, const double *qdd, double *tau);",
             f"void {function}(const double *q, const double *qd, const double *qdd, double *tau)",
             "{"]
    for i in range(n):
        si, ci = symbols["s"][i], symbols["c"][i]
        if si is not None and si in used:
            lines.append(f"    const double s{i} = sin(q[{i}]);")
        if ci is not None and ci in used:
            lines.append(f"    const double c{i} = cos(q[{i}]);")
    for lhs, rhs in needed:
        lines.append(f"    const double {lhs} = {c(rhs)};")
    for i, joint in enumerate(robot.joints):
        d = joint.drive
        drive = []
        if d.armature:
            drive.append(f"{d.armature!r}*qdd[{i}]")
        if d.viscous:
            drive.append(f"{d.viscous!r}*qd[{i}]")
        if d.coulomb:
            drive.append(f"{d.coulomb!r}*fmin(fmax(qd[{i}]/{d.coulomb_band!r}, -1.0), 1.0)")
        body = c(taus[i]) if taus[i] != 0 else "0.0"
        lines.append(f"    tau[{i}] = {' + '.join([body] + drive)};")
    if not any(symbols["q"][i] in used or (symbols["s"][i] in used if symbols["s"][i] else False)
               or (symbols["c"][i] in used if symbols["c"][i] else False) for i in range(n)):
        lines.append("    (void)q;")
    lines.append("}")
    source = "\n".join(lines) + "\n"
    ops = int(sum(sp.count_ops(rhs) for _, rhs in needed) + sum(sp.count_ops(e) for e in taus))
    facts = {"dof": n, "derive_s": round(t1 - t0, 4), "cse_s": round(t2 - t1, 4),
             "temporaries": len(needed), "operations": ops, "lines": len(lines),
             "bytes": len(source.encode())}
    return source, facts


def evaluate(robot, q, qd, qdd, atomize=True):
    """The symbolic torques evaluated numerically (drive terms included), for checks."""
    exprs, symbols, defs = derive(robot, atomize)
    sub = {}
    for i, joint in enumerate(robot.joints):
        sub[symbols["q"][i]] = q[i]
        sub[symbols["qd"][i]] = qd[i]
        sub[symbols["qdd"][i]] = qdd[i]
        if symbols["s"][i] is not None:
            sub[symbols["s"][i]] = float(np.sin(q[i]))
            sub[symbols["c"][i]] = float(np.cos(q[i]))
    for sym, e in defs:
        sub[sym] = float(e.xreplace(sub))
    tau = np.array([float(sp.sympify(e).xreplace(sub)) for e in exprs])
    for i, joint in enumerate(robot.joints):
        d = joint.drive
        tau[i] += (d.armature * qdd[i] + d.viscous * qd[i]
                   + d.coulomb * float(np.clip(qd[i] / d.coulomb_band, -1.0, 1.0)))
    return tau
