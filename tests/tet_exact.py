"""sympy references for the tetra10 tests: shape functions solved from their
interpolation conditions, the symbolic det J of an element, and its exact minimum over
the reference tetrahedron (critical points of every stratum: inside, faces, edges,
corners)."""

from __future__ import annotations

import numpy as np
import sympy as sp

from meshaudit.metrics.solid import tet_reference as ref

X = sp.symbols("x y z")
#: Digits kept in the minimum's numerical evaluation (its critical points are roots of
#: polynomials with rational coefficients, found to this precision).
DIGITS = 40


def shape_functions_from_interpolation() -> list[sp.Expr]:
    """The 10 quadratic polynomials N_k with N_k(node_j) = delta_kj at meshio's tetra10
    nodes, solved from the interpolation conditions (no formula assumed)."""
    x, y, z = X
    monomials = [sp.Integer(1), x, y, z, x * x, y * y, z * z, x * y, y * z, z * x]
    nodes = [[sp.Rational(str(v)) for v in node] for node in ref.TETRA10_NODES]
    vander = sp.Matrix([[m.subs(dict(zip(X, node))) for m in monomials] for node in nodes])
    coeffs = vander.inv()  # column k: the coefficients of N_k
    return [sp.expand(sum(coeffs[i, k] * monomials[i] for i in range(10))) for k in range(10)]


def symbolic_det_j(nodes: np.ndarray) -> sp.Expr:
    """det J(x, y, z) of the tetra10 with these nodes (read as exact decimals)."""
    shapes = shape_functions_from_interpolation()
    exact = [[sp.Rational(repr(float(v))) for v in node] for node in nodes]
    position = [sum(exact[k][d] * shapes[k] for k in range(10)) for d in range(3)]
    jac = sp.Matrix(3, 3, lambda a, b: sp.diff(position[b], X[a]))
    return sp.expand(jac.det())


def _critical_points(p: sp.Expr, names: list[sp.Symbol]) -> list[list[sp.Expr]]:
    """Real solutions of grad p = 0, from a lex Groebner basis in shape position
    (v_i - f_i(v_last), h(v_last)); roots of h to DIGITS digits."""
    if len(names) == 1:
        d = sp.Poly(sp.diff(p, names[0]), names[0])
        if d.degree() <= 0:
            return []
        roots = d.nroots(n=DIGITS)
        return [[sp.re(r)] for r in roots if abs(sp.im(r)) < 1e-25]
    basis = sp.groebner([sp.diff(p, v) for v in names], *names, order="lex")
    polys = [sp.Poly(g, *names) for g in basis.exprs]
    if any(g.is_ground for g in polys):
        return []
    last = polys[-1]
    assert len(polys) == len(names), "not in shape position"
    assert last.degree_list()[:-1] == (0,) * (len(names) - 1), "not in shape position"
    out = []
    for r in sp.Poly(last.as_expr(), names[-1]).nroots(n=DIGITS):
        if abs(sp.im(r)) > 1e-25:
            continue
        r = sp.re(r)
        point = []
        for i, g in enumerate(polys[:-1]):
            assert g.degree(names[i]) == 1, "not in shape position"
            point.append(sp.solve(g.as_expr().subs(names[-1], r), names[i])[0])
        out.append([*point, r])
    return out


def exact_minimum(p: sp.Expr) -> tuple[float, list[float]]:
    """Minimum of the polynomial p(x, y, z) over the unit reference tetrahedron, and
    where: the least value over the critical points inside, on the four faces and six
    edges, and the four corners."""
    x, y = X[:2]
    t = sp.Symbol("t")
    candidates: list[tuple[sp.Expr, list[sp.Expr]]] = []

    def add(point):
        point = [sp.N(v, DIGITS) for v in point]
        if min(point) >= -1e-30 and sum(point) <= 1 + 1e-30:
            candidates.append((sp.N(p.subs(dict(zip(X, point))), DIGITS), point))

    for point in _critical_points(p, list(X)):
        add(point)
    for face in ((x, y, 0), (x, 0, y), (0, x, y), (x, y, 1 - x - y)):
        q = sp.expand(p.subs(dict(zip(X, face)), simultaneous=True))
        for a, b in _critical_points(q, [x, y]):
            add([sp.sympify(e).subs({x: a, y: b}, simultaneous=True) for e in face])
    c = ref.CORNERS
    for a, b in ref.EDGES:
        line = [int(c[a][d]) + t * int(c[b][d] - c[a][d]) for d in range(3)]
        q = sp.expand(p.subs(dict(zip(X, line)), simultaneous=True))
        for (r,) in _critical_points(q, [t]):
            add([sp.sympify(e).subs(t, r) for e in line])
    for corner in c:
        add([sp.Integer(int(v)) for v in corner])
    value, point = min(candidates, key=lambda item: item[0])
    return float(value), [float(v) for v in point]
