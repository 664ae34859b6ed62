"""What an element's shape costs the analysis, from its own stiffness and mass.

Measured only when the audit is given a material (:class:`meshaudit.material.Material`):
without one nothing here runs and the metrics are not defined (NaN).

* ``stable_time_step`` (time, the unit of the material's consistent set: seconds for SI
  or N, mm, tonne): 2 / omega_max, omega_max^2 the largest eigenvalue of the element's
  stiffness K (full Gauss integration, the cell type's own rule) against its lumped mass
  M (row sums; quadratic cells: the scaled diagonal), the critical step of the central
  difference method for that element alone. 0 for an element that is not valid (any
  validity flag, or det J <= 0 at a Gauss point): no explicit run can take it.
* ``bending_error`` (1, >= 0): the energy of the strain error of the element under the
  exact pure-bending field (its nodal interpolant's strain minus the exact strain at its
  Gauss points) over the exact energy, about its worst principal axis (:mod:`.bending`;
  solids: the worst pair of principal axes, :mod:`.solid_axes`); never negative, so
  errors cannot cancel; ``bending_error_distortion`` (1): that
  error minus the same element type's error when undistorted (rectangle, isosceles
  triangle, box, tetrahedron on alternate box corners, right prism, right pyramid of the
  same principal lengths), the part the distortion adds. Infinite for an element that is
  not valid.
* constant-strain check: imposed nodal displacements u = eps x must give the strain eps
  at every Gauss point (B u = eps) with det J > 0 there (:func:`constant_strain_failures`).
"""

from __future__ import annotations

import numpy as np

from ...cells.registry import CellType
from ...mesh.frames import Frame, to_local
from .. import STIFFNESS_METRICS
from . import bending, element, solid_axes
from .rules import tables

#: Largest deviation of sum_i x_i (x) dN_i/dx from the identity a Gauss point may show
#: (the strains of u = eps x come out as eps times that matrix): meshaudit default, no
#: published source, far above the rounding of a well-shaped element (1e-15) and far
#: below any strain error an analyst would accept.
STRAIN_TOLERANCE = 1e-8

#: Entries of the largest temporary (n, d k, d k) array per block: bounds the memory of
#: the batched matrices whatever the chunk size (about 8 MB).
_BLOCK_ENTRIES = 1 << 20


def element_nodes(cell: CellType, coords3: np.ndarray, frame: Frame) -> np.ndarray:
    """Nodes (n, k, d) the stiffness is worked out on: surface cells laid in their
    measuring plane (as the shape metrics are: shells in their own plane), solids in
    space."""
    if cell.dimension == 3:
        return np.asarray(coords3, dtype=np.float64)
    if cell.is_quadratic:
        return to_local(coords3, frame, cell.n_corners)
    return to_local(coords3[:, : cell.n_corners], frame)


def measure(
    cell: CellType,
    coords3: np.ndarray,
    frame: Frame,
    invalid: np.ndarray,
    lam: np.ndarray,
    mu: np.ndarray,
    rho: np.ndarray,
    exponent: int = 0,
) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """(metrics {name: (n,)} of :data:`STIFFNESS_METRICS`, constant-strain failures (n,)
    bool) of elements ``coords3`` (n, k, 3) of one cell type.

    ``invalid`` (n,): elements the shape kernel flagged; ``lam``, ``mu`` (n,) the law's
    constants for the element's dimension (see :meth:`meshaudit.material.Material.lame`),
    ``rho`` (n,) its density, NaN where no material applies (the metrics are then NaN).
    ``coords3`` may be scaled by 2^-``exponent``: the time step is given back in the
    nodes' own units.
    """
    x = element_nodes(cell, coords3, frame)
    n, k, d = x.shape
    out = {name: np.full(n, np.nan) for name in STIFFNESS_METRICS}
    failed = np.zeros(n, dtype=bool)
    step = max(1, _BLOCK_ENTRIES // (d * k) ** 2)
    for start in range(0, n, step):
        sl = slice(start, min(n, start + step))
        part, failed[sl] = measure_nodes(cell, x[sl], invalid[sl], lam[sl], mu[sl], rho[sl])
        for name, values in part.items():
            out[name][sl] = values
    if exponent:
        out["stable_time_step"] = np.ldexp(out["stable_time_step"], exponent)
    return out, failed


def _normalised(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(nodes moved to their mean and divided by their largest distance from it, that
    distance (n,)): every quantity below is then of order one."""
    rel = x - x.mean(axis=1, keepdims=True)
    size = np.sqrt((rel**2).sum(axis=2).max(axis=1))
    good = np.isfinite(size) & (size > 0)
    size = np.where(good, size, 1.0)
    return rel / size[:, None, None], size


def constant_strain_failures(geo: element.Geometry) -> np.ndarray:
    """Elements (n,) that fail the constant-strain check: imposing u = eps x at the nodes
    gives the strain B u = eps G at each Gauss point, G = sum_i x_i (x) dN_i/dx (the
    identity in exact arithmetic wherever J is invertible); an element fails where G
    misses the identity by more than :data:`STRAIN_TOLERANCE` or det J <= 0 at a Gauss
    point (the strain energy is integrated there with a weight of the wrong sign)."""
    deviation = element.strain_deviation(geo)
    return ~(deviation <= STRAIN_TOLERANCE) | ~(geo.det > 0).all(axis=0)


def measure_nodes(
    cell: CellType,
    x: np.ndarray,
    invalid: np.ndarray,
    lam: np.ndarray,
    mu: np.ndarray,
    rho: np.ndarray,
) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """:func:`measure` of elements whose nodes ``x`` (n, k, d) are already laid out (in
    their plane for a surface cell, see :func:`element_nodes`), in one block (memory
    (n, k d, k d)): the three metrics and the constant-strain failures."""
    tab = tables(cell.name)
    xn, size = _normalised(x)
    geo = element.geometry(tab, xn)
    failed = constant_strain_failures(geo)
    has = np.isfinite(lam) & np.isfinite(mu) & np.isfinite(rho)
    ok = has & ~invalid & ~failed
    step = np.where(has, 0.0, np.nan)
    err = np.where(has, np.inf, np.nan)
    dist = err.copy()
    rows = np.flatnonzero(ok)
    if rows.size:
        sub = geo
        if rows.size < len(x):
            sub = element.Geometry(geo.nodes[..., rows], geo.det[:, rows], geo.grad[..., rows])
        kmat = element.stiffness(element.geometric_part(tab, sub), lam[rows], mu[rows])
        fine = element.fine_det(tab, xn[rows])
        masses = element.lumped_masses(tab, fine)
        with np.errstate(divide="ignore", invalid="ignore"):
            omega2 = element.largest_eigenvalue(kmat, masses) / rho[rows]
            dt = 2.0 / np.sqrt(omega2) * size[rows]
        good = (masses > 0).all(axis=1) & np.isfinite(dt) & (dt > 0)
        step[rows] = np.where(good, dt, 0.0)
        err[rows], dist[rows] = _bending(cell, tab, xn[rows], sub, fine, lam[rows], mu[rows])
    out = {"stable_time_step": step, "bending_error": err, "bending_error_distortion": dist}
    return out, failed


def _bending(cell, tab, x, geo, fine, lam, mu) -> tuple[np.ndarray, np.ndarray]:
    """(bending_error, bending_error_distortion) of valid elements ``x`` (n, k, d) of
    Gauss geometry ``geo`` and det J ``fine`` at the fine points: the element in its
    frames, its undistorted twin in the twin's."""
    if x.shape[2] == 2:
        d1, d2, lengths = bending.axes(cell, x)
        own = bending.plane_frames(d1, d2)
    else:
        vectors, lengths = solid_axes.axes(cell, x)
        own = solid_axes.frames(vectors)
    error = bending.relative_errors(tab, geo, bending.second_moments(tab, geo, fine), lam, mu, own)
    ref_geo, ref_moments, ref_frames = bending.twin(
        cell, lengths / lengths.max(axis=1, keepdims=True)
    )
    base = bending.relative_errors(tab, ref_geo, ref_moments, lam, mu, ref_frames)
    return error, error - base
