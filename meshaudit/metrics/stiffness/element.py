"""Element stiffness and lumped mass of isoparametric elements, batched over elements.

For elements with nodes ``x`` (n, k, d), d = 2 (in their own plane) or 3:

* J at the Gauss points, J[a, b] = sum_i dN_i/dxi_a x_ib, and the shape gradients
  dN_i/dx = J^-1 dN_i/dxi;
* the stiffness K (n, k d, k d) = sum_g w_g det J_g B_g^T D B_g, node-major degrees of
  freedom (u_1, v_1, u_2, ...), B the strain-displacement matrix and D the isotropic law
  written with Lame's constants (in plane stress lambda* = E nu / (1 - nu^2)):
  K[(i, a), (j, b)] = lambda P[a, b, i, j] + mu (P[b, a, i, j] + delta_ab sum_c P[c, c, i, j])
  with P[a, b, i, j] = sum_g w_g det J_g dN_i/dx_a dN_j/dx_b, the geometric part, the same
  for every material;
* the lumped mass per node (n, k), per unit density (and thickness): row sums of the
  consistent mass, int N_i det J, or its scaled diagonal (see
  :data:`meshaudit.metrics.stiffness.rules.DIAGONAL_LUMPED`).

The arrays are held element-last, (..., n), so that every product streams through
contiguous (n,) rows: a few hundred such products build the 8 x 8 stiffness of a chunk of
quadrilaterals faster than any batched small-matrix product.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .rules import Tables


def det_and_inverse(jac: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """det J (m, n) and J^-1 (m, d, d, n) of J (m, d, d, n), by the adjugate (inf or NaN
    where det J = 0; no exception)."""
    adj = np.empty_like(jac)
    if jac.shape[1] == 2:
        a, b, c, d = jac[:, 0, 0], jac[:, 0, 1], jac[:, 1, 0], jac[:, 1, 1]
        det = a * d - b * c
        adj[:, 0, 0], adj[:, 0, 1], adj[:, 1, 0], adj[:, 1, 1] = d, -b, -c, a
    else:
        for col, (p, q) in enumerate(((1, 2), (2, 0), (0, 1))):  # adjugate columns
            rp, rq = jac[:, p], jac[:, q]
            adj[:, 0, col] = rp[:, 1] * rq[:, 2] - rp[:, 2] * rq[:, 1]
            adj[:, 1, col] = rp[:, 2] * rq[:, 0] - rp[:, 0] * rq[:, 2]
            adj[:, 2, col] = rp[:, 0] * rq[:, 1] - rp[:, 1] * rq[:, 0]
        det = jac[:, 0, 0] * adj[:, 0, 0] + jac[:, 0, 1] * adj[:, 1, 0]
        det += jac[:, 0, 2] * adj[:, 2, 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        adj /= det[:, None, None, :]
    return det, adj


def jacobians(derivatives: np.ndarray, nodes: np.ndarray) -> np.ndarray:
    """J (m, d, d, n) from shape derivatives (m, d, k) and nodes element-last (k, d, n).

    numpy's own sum loop (einsum), not a BLAS product: BLAS threads on products this
    thin spin against each other on a busy machine (ten times slower measured on two
    shared cores), and the audit's own threads already share the cores."""
    return np.einsum("mak,kbn->mabn", derivatives, nodes)


@dataclass(frozen=True)
class Geometry:
    """The element-last nodes ``nodes`` (k, d, n), det J ``det`` (g, n) and shape
    gradients ``grad`` (g, d, k, n) at the stiffness Gauss points."""

    nodes: np.ndarray
    det: np.ndarray
    grad: np.ndarray


def geometry(tab: Tables, x: np.ndarray) -> Geometry:
    """:class:`Geometry` of elements ``x`` (n, k, d)."""
    nodes = np.ascontiguousarray(x.transpose(1, 2, 0))
    det, inverse = det_and_inverse(jacobians(tab.derivatives, nodes))
    d = x.shape[2]
    grad = inverse[:, :, 0, None, :] * tab.derivatives[:, None, 0, :, None]
    for c in range(1, d):
        grad += inverse[:, :, c, None, :] * tab.derivatives[:, None, c, :, None]
    return Geometry(nodes, det, grad)


def strain_deviation(geo: Geometry) -> np.ndarray:
    """max over Gauss points of |G - I| (n,), G = sum_i x_i (x) dN_i/dx: the strains of
    the nodal displacements u = eps x are eps G."""
    g = geo.grad[:, :, 0, None, :] * geo.nodes[0, None, None, :, :]
    for i in range(1, geo.nodes.shape[0]):
        g += geo.grad[:, :, i, None, :] * geo.nodes[i, None, None, :, :]
    d = geo.nodes.shape[1]
    g -= np.eye(d)[None, :, :, None]
    return np.abs(g).max(axis=(0, 1, 2))


def geometric_part(tab: Tables, geo: Geometry) -> np.ndarray:
    """P (d, d, k, k, n) (see the module docstring)."""
    weighted = geo.grad * (geo.det * tab.weights[:, None])[:, None, None, :]
    m, d, k, n = geo.grad.shape
    if m * (d * k) ** 2 <= 4096:  # small elements: products of (n,) rows
        p = np.empty((d, d, k, k, n))
        for a in range(d):
            for i in range(k):
                for b in range(d):
                    for j in range(k):
                        if (b, j) < (a, i):
                            p[a, b, i, j] = p[b, a, j, i]
                            continue
                        acc = weighted[0, a, i] * geo.grad[0, b, j]
                        for q in range(1, m):
                            acc += weighted[q, a, i] * geo.grad[q, b, j]
                        p[a, b, i, j] = acc
        return p
    left = weighted.reshape(m, d * k, n).transpose(2, 1, 0)  # (n, d k, m)
    right = geo.grad.reshape(m, d * k, n).transpose(2, 0, 1)  # (n, m, d k)
    return (left @ right).reshape(n, d, k, d, k).transpose(1, 3, 2, 4, 0)


def stiffness(p: np.ndarray, lam: np.ndarray, mu: np.ndarray) -> np.ndarray:
    """K (n, k d, k d) per unit thickness (2-D) from :func:`geometric_part` and the
    law's constants (n,)."""
    d, _, k, _, n = p.shape
    trace = p[0, 0].copy()
    for c in range(1, d):
        trace += p[c, c]
    out = np.empty((k, d, k, d, n))
    for a in range(d):
        for b in range(d):
            block = lam * p[a, b]
            block += mu * p[b, a]
            if a == b:
                block += mu * trace
            out[:, a, :, b] = block
    return np.ascontiguousarray(out.reshape(k * d, k * d, n).transpose(2, 0, 1))


def fine_det(tab: Tables, x: np.ndarray) -> np.ndarray:
    """det J (n, q) at the points of the fine rule, of elements ``x`` (n, k, d)."""
    jac = jacobians(tab.fine_derivatives, np.ascontiguousarray(x.transpose(1, 2, 0)))
    if jac.shape[1] == 2:
        det = jac[:, 0, 0] * jac[:, 1, 1] - jac[:, 0, 1] * jac[:, 1, 0]
    else:
        r0, r1, r2 = jac[:, 0], jac[:, 1], jac[:, 2]
        det = r0[:, 0] * (r1[:, 1] * r2[:, 2] - r1[:, 2] * r2[:, 1])
        det += r0[:, 1] * (r1[:, 2] * r2[:, 0] - r1[:, 0] * r2[:, 2])
        det += r0[:, 2] * (r1[:, 0] * r2[:, 1] - r1[:, 1] * r2[:, 0])
    return np.ascontiguousarray(det.T)


def lumped_masses(tab: Tables, fine: np.ndarray) -> np.ndarray:
    """Mass of each node (n, k) per unit density (and thickness), from det J at the fine
    points ``fine`` (n, q): row sums int N_i det J, or for quadratic cells the diagonal
    int N_i^2 det J scaled so the masses add up to the element's (Hinton, Rock and
    Zienkiewicz 1976, from memory)."""
    wdet = fine * tab.fine_weights
    if not tab.diagonal_lumped:
        return np.einsum("nq,qk->nk", wdet, tab.fine_functions)  # no BLAS (see jacobians)
    diagonal = np.einsum("nq,qk->nk", wdet, tab.fine_functions**2)
    with np.errstate(divide="ignore", invalid="ignore"):
        scale = wdet.sum(axis=1) / diagonal.sum(axis=1)
    return diagonal * scale[:, None]


def largest_eigenvalue(k_matrix: np.ndarray, masses: np.ndarray) -> np.ndarray:
    """omega_max^2 (n,): the largest eigenvalue of K v = omega^2 M v with M the diagonal
    of nodal ``masses`` (n, k), each repeated on the node's d degrees of freedom: the
    largest eigenvalue of M^-1/2 K M^-1/2 (numpy.linalg.eigvalsh on the stack)."""
    dk = k_matrix.shape[1]
    d = dk // masses.shape[1]
    with np.errstate(divide="ignore", invalid="ignore"):
        scale = 1.0 / np.sqrt(np.repeat(masses, d, axis=1))
    a = k_matrix * scale[:, :, None] * scale[:, None, :]
    bad = ~np.isfinite(a).all(axis=(1, 2))
    a[bad] = 0.0
    out = np.linalg.eigvalsh(a)[:, -1]
    out[bad] = np.inf
    return out
