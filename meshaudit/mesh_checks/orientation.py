"""One account of element orientation, told the same way by the flags and the finding.

What an element's orientation is judged against depends on the mesh (see
:attr:`meshaudit.mesh.frames.Frame.orientation`):

- ``"+z"``, a planar mesh whose plane does not contain z. A 2-D solver reads x and y
  and drops z, so it sees each element wound as the element's area projected on x-y: an
  element wound clockwise about +z has a negative det J there. Such an element is
  flagged ``reversed`` (and ``inverted``), and the ``inconsistent_winding`` finding names
  exactly these elements: "N of M elements wound clockwise about +z", or, when every
  element is, the whole mesh. The remedy is the same for each: reverse its node order.
- ``"relative"``, a shell, or a planar mesh whose plane contains z. There is no absolute
  orientation, only agreement between neighbours: two elements sharing an edge must run
  along it in opposite directions. Each connected patch is split into the elements that
  agree (:func:`meshaudit.mesh.topology.flipped_elements`), the smaller group is flagged
  ``flipped_normal`` and the ``opposite_normals`` finding names exactly these elements;
  reversing their node order makes the patch agree. A patch that cannot be oriented at
  all (a Moebius-like band) is named, but no element of it is to blame.
- ``"none"``, a mesh of solids alone: no surface elements to compare. Each solid's
  orientation is the sign of its own det J (flagged ``reversed`` by its kernel).

Here only surface elements are compared
(:meth:`meshaudit.mesh.elements.ElementMesh.surface_part`); solids are compared with their
neighbours across their common faces by
:mod:`meshaudit.mesh_checks.solid_findings` (the ``inside_out_solids`` finding).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..mesh.elements import ElementMesh
from ..mesh.frames import Frame, area_vectors
from ..mesh.topology import EdgeTable, flipped_elements


@dataclass(frozen=True)
class Orientation:
    """Which elements are wound the wrong way, and against what."""

    reference: str  # "+z", "relative" or "none" (solids alone; see the module docstring)
    turned: np.ndarray  # (n,) bool: elements whose node order should be reversed
    twisted: np.ndarray  # (n,) bool: on a patch no node order can orient ("relative")
    geometry: str  # "planar", "shell" or "beside solids", for the messages


def judge(
    mesh: ElementMesh, frame: Frame, reversed_: np.ndarray, table: EdgeTable | None = None
) -> Orientation:
    """The orientation verdict of every element.

    ``reversed_`` (n,) bool: the elements the kernels flagged ``reversed`` (wound
    clockwise in the measuring plane; only a ``"+z"`` frame has such elements).
    ``table``: the mesh's edge table, for the relative check (built here unless given).
    """
    none = np.zeros(mesh.n_elements, dtype=bool)
    if frame.orientation == "none":
        return Orientation("none", none, none.copy(), frame.kind)
    if frame.orientation == "+z":
        return Orientation("+z", reversed_.astype(bool, copy=True), none, "planar")
    groups = flipped_elements(mesh, table)
    geometry = "beside solids" if frame.beside_solids else frame.kind
    return Orientation("relative", groups.flipped, groups.twisted, geometry)


def describe(orientation: Orientation, ids: np.ndarray, some: Callable[[np.ndarray], str]) -> str:
    """The finding's message: how many elements to reverse, against what, and which.

    ``some`` formats a list of element ids (the findings' shortened lists).
    """
    n = orientation.turned.size
    turned = np.flatnonzero(orientation.turned)
    if orientation.reference == "+z":
        if turned.size == n:
            return (
                f"all {n} elements are wound clockwise about +z (a 2-D solver reading x and y "
                "sees every det J negative): reverse the node order of every element"
            )
        return (
            f"{turned.size} of {n} elements are wound clockwise about +z (a 2-D solver "
            f"reading x and y sees their det J negative): reverse their node order: "
            f"{some(ids[turned])}"
        )
    why = {
        "shell": "a shell has no absolute orientation",
        "beside solids": "surface elements beside solids have no absolute orientation",
    }.get(orientation.geometry, "the mesh plane contains z, so there is no absolute orientation")
    parts = []
    if turned.size:
        parts.append(
            f"{turned.size} of {n} elements face against the rest of their patch ({why}): "
            f"reverse their node order: {some(ids[turned])}"
        )
    twisted = np.flatnonzero(orientation.twisted)
    if twisted.size:
        parts.append(
            f"{twisted.size} elements lie on a patch that cannot be consistently oriented "
            f"(a Moebius-like band): {some(ids[twisted])}"
        )
    return "; ".join(parts)


#: A shell whose nodes stay within this fraction of its size of one plane is nearly flat:
#: perhaps a 2-D model written with uneven z. meshaudit default, no published source.
NEARLY_FLAT = 1e-3

#: Elements per slice in :func:`clockwise_about_z` (bounds its temporaries).
_SLICE = 65_536


def clockwise_about_z(mesh: ElementMesh) -> int:
    """How many elements' corner polygons wind clockwise about +z (negative z component
    of the area vector): what a 2-D solver reading x and y would see inverted."""
    count = 0
    for block, sl in mesh.chunks(_SLICE):
        k = block.cell.n_corners
        av = area_vectors(mesh.points[block.connectivity[sl, :k]])
        count += int(np.count_nonzero(av[:, 2] < 0.0))
    return count


def nearly_flat_shell_note(mesh: ElementMesh, frame: Frame) -> list[str]:
    """A report note for a shell that is nearly flat and faces +z (within 60 degrees) with
    elements wound clockwise about +z: audited as a shell, it is not judged against +z,
    though a 2-D solver reading x and y would see those elements inverted."""
    if frame.kind != "shell" or frame.flatness is None or frame.flatness > NEARLY_FLAT:
        return []
    if frame.fit_normal is None or abs(float(frame.fit_normal[2])) < 0.5:
        return []
    clockwise = clockwise_about_z(mesh)
    if clockwise == 0:
        return []
    return [
        f"the nodes leave their best-fit plane by up to {frame.flatness:.2g} of the mesh "
        "size, more than the planar tolerance, so the mesh is audited as a shell and "
        "orientation is judged only between neighbours; a 2-D solver reading x and y "
        f"would see {clockwise} of {mesh.n_elements} elements wound clockwise about +z "
        "(inverted): if this is a 2-D model, make its z exact"
    ]
