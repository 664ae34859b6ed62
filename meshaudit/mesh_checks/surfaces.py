"""The boundary surfaces of the solids: their free faces grouped into surfaces.

A boundary (free) face is a face of the face table (:mod:`meshaudit.mesh.faces`) used
by one solid. Free faces whose corners are at the same places (see
:class:`~meshaudit.mesh_checks.nodes.NodeClusters`) as the corners of another free face
are **crack faces**: the solids on either side meet there on distinct, unmerged nodes.
Free faces on a non-conforming interface (:mod:`meshaudit.mesh_checks.solid_hanging`)
are **interface faces**. The free faces are grouped into surfaces: connected components
of faces sharing an edge (or, across a non-conforming interface, a corner lying on
another face's edge), crack, interface and other faces each among their own kind. Each
surface has its area and the volume it encloses (divergence theorem over its faces,
which point out of the solids): positive for the outer skin of a body, negative for an
internal void, whose faces point into the hole. So a surface is a ``skin`` (volume
> 0), a ``void`` (volume < 0), a ``crack`` or an ``interface``; when the surface
enclosing the largest volume has a negative one (every solid mirrored), the signs are
read the other way round.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..mesh.faces import FaceTable, key_halves, sorted_rows, vector_areas
from ..mesh.topology import connected_labels

#: Kinds of face a surface is made of, in the order of the class numbers.
FACE_CLASSES = ("other", "crack", "interface")


@dataclass(frozen=True)
class BoundarySurfaces:
    """Free faces and the surfaces they form.

    ``use`` (b,) face-table use positions of the free faces, ascending; ``crack`` and
    ``interface`` (b,) bool; ``surface`` (b,) the surface each belongs to, 0..s-1, the
    surfaces ordered by kind (skins by enclosed volume, largest first; then voids,
    cracks, interfaces); ``kind`` (s,) "skin", "void", "crack" or "interface";
    ``area`` (s,) the sum of the faces' areas (length^2); ``volume`` (s,) the signed
    volume enclosed (length^3; negative for a void; meaningless for cracks and
    interfaces); ``faces`` (s,) how many faces."""

    use: np.ndarray
    crack: np.ndarray
    interface: np.ndarray
    surface: np.ndarray
    kind: np.ndarray
    area: np.ndarray
    volume: np.ndarray
    faces: np.ndarray

    @property
    def n_surfaces(self) -> int:
        return int(self.kind.size)

    def records(self) -> list[dict[str, object]]:
        """One plain record per surface (JSON): kind, faces, area, volume."""
        return [
            {
                "surface": int(i),
                "kind": str(self.kind[i]),
                "faces": int(self.faces[i]),
                "area": float(self.area[i]),
                "volume": float(self.volume[i]),
            }
            for i in range(self.n_surfaces)
        ]


def crack_faces(table: FaceTable, free: np.ndarray, rep: np.ndarray) -> np.ndarray:
    """(b,) bool for the free faces ``free`` (use positions): their corners are at the
    places of another free face's corners (``rep``: each node's place). Faces whose
    corners fall on fewer than three places are no crack faces."""
    places = rep[np.maximum(table.corners[free], 0)]
    places[table.corners[free] < 0] = -1
    key = sorted_rows(places)
    flat = (key[:, 1:] == key[:, :-1]) & (key[:, 1:] >= 0)
    high, low, _ = key_halves(key, rep.size)
    joined = np.stack([high, low], axis=1)
    if joined.shape[0] == 0:
        return np.zeros(0, dtype=bool)
    _, inverse, counts = np.unique(joined, axis=0, return_inverse=True, return_counts=True)
    return (counts[inverse.ravel()] > 1) & ~flat.any(axis=1)


def boundary_surfaces(
    table: FaceTable,
    points: np.ndarray,
    free: np.ndarray,
    crack: np.ndarray,
    interface: np.ndarray,
    links: np.ndarray | None = None,
) -> BoundarySurfaces:
    """Group the free faces ``free`` (use positions) into surfaces (see the module text).

    ``crack``, ``interface`` (b,) bool: the class of each; ``links`` (k, 2) extra pairs
    of rows of ``free`` to join (faces meeting across a non-conforming interface)."""
    b = free.size
    cls = np.where(crack, 1, np.where(interface, 2, 0)).astype(np.int64)
    corners = table.corners[free].astype(np.int64)
    size = np.where(corners[:, 3] < 0, 3, 4)
    # every side of every free face, keyed by its two nodes and the face's class
    starts = corners
    ends = np.roll(corners, -1, axis=1)
    ends[size == 3, 2] = corners[size == 3, 0]
    real = np.arange(4)[None, :] < size[:, None]
    row = np.broadcast_to(np.arange(b)[:, None], (b, 4))[real]
    lo = np.minimum(starts, ends)[real]
    hi = np.maximum(starts, ends)[real]
    n = np.int64(points.shape[0])
    key = (lo * n + hi) * 3 + cls[row]
    order = np.argsort(key, kind="stable")
    key, row = key[order], row[order]
    first = np.r_[True, key[1:] != key[:-1]]
    head = row[np.maximum.accumulate(np.where(first, np.arange(key.size), 0))]
    a, c = head[~first], row[~first]
    if links is not None and links.size:
        same = cls[links[:, 0]] == cls[links[:, 1]]
        a = np.concatenate([a, links[same, 0]])
        c = np.concatenate([c, links[same, 1]])
    label = connected_labels(b, a, c)
    roots, surface = np.unique(label, return_inverse=True)
    surface = surface.ravel()
    s = roots.size
    area_vec, centre = vector_areas(points, corners)
    area = np.bincount(surface, weights=np.linalg.norm(area_vec, axis=1), minlength=s)
    # 1/3 of the flux of x through each face (exact for flat faces); measured from one
    # point near the faces, which changes nothing on a closed surface but round-off
    ref = centre.mean(axis=0) if b else np.zeros(3)
    flux = np.einsum("ij,ij->i", centre - ref, area_vec)
    volume = np.bincount(surface, weights=flux, minlength=s) / 3.0
    n_faces = np.bincount(surface, minlength=s)
    cls_of = np.zeros(s, dtype=np.int64)
    cls_of[surface] = cls
    kind = np.where(cls_of == 1, "crack", np.where(cls_of == 2, "interface", "skin"))
    kind = kind.astype(object)
    # the sign that means "skin": that of the surface enclosing the largest volume (a
    # mesh whose solids are all mirrored points every face inward: its skin is still the
    # skin, and the element checks report the mirrored solids)
    closed = cls_of == 0
    outward = 1.0
    if closed.any():
        largest = np.flatnonzero(closed)[np.argmax(np.abs(volume[closed]))]
        outward = -1.0 if volume[largest] < 0 else 1.0
    kind[closed & (volume * outward < 0)] = "void"
    rank = np.select([kind == "skin", kind == "void", kind == "crack"], [0, 1, 2], 3)
    order = np.lexsort((-np.abs(volume), rank))
    new = np.empty(s, dtype=np.int64)
    new[order] = np.arange(s)
    return BoundarySurfaces(
        use=free,
        crack=crack,
        interface=interface,
        surface=new[surface],
        kind=kind[order],
        area=area[order],
        volume=volume[order],
        faces=n_faces[order],
    )
