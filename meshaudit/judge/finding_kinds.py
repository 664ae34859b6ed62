"""The mesh-level finding kinds, their default severities and why.

Kind names are a machine-readable contract (JSON ``findings[].kind``, profile
``[findings]`` keys, JUnit test-case names): don't rename them.

Severities: ``fail`` fails the mesh (exit status 1), ``warn`` fails it only under
``fail_on="warn"``, ``info`` never does, ``off`` skips the check.
"""

from __future__ import annotations

from dataclasses import dataclass, field

SEVERITIES: tuple[str, ...] = ("off", "info", "warn", "fail")

#: Relative distance under which two distinct nodes are the same point: this times the
#: shorter of the two nodes' shortest adjacent edges. From memory (common practice for
#: node-merge tolerances in double precision, no single source).
COINCIDENT_TOLERANCE = 1e-6

#: Two elements overlap when their common area exceeds this fraction of the smaller
#: element's area. meshaudit default, no published source: well above round-off, well
#: below any overlap an analyst would mean.
OVERLAP_FRACTION = 1e-3


@dataclass(frozen=True)
class FindingKind:
    name: str
    severity: str  # default severity
    counts: str  # what ``count`` counts
    meaning: str
    rationale: str  # why the default severity
    geometry: str = "any"  # "any", or the only frame kind it applies to ("planar", "shell")
    #: "any", or the only orientation reference it applies to ("+z" or "relative", see
    #: meshaudit.mesh_checks.orientation)
    orientation: str = "any"
    #: Whether the check looks at the surface elements only (their edges, windings):
    #: such checks have nothing to look at in a mesh of solids alone (frame "solid").
    surface: bool = True
    #: Whether the check runs only when the audit is given a material (see
    #: meshaudit.metrics.stiffness); such kinds are not mesh-level checks of the topology.
    material: bool = False
    #: Whether the check looks at the solids only (their faces): it has nothing to look
    #: at in a mesh without solids, and is not listed for one.
    solid: bool = False

    def applies_to(self, frame_kind: str, orientation: str = "any") -> bool:
        """Whether this check runs on a mesh of ``frame_kind`` whose orientation is judged
        against ``orientation`` ("any": whatever the reference). A check of the solids
        applies to any mesh that has solids (see :attr:`solid`)."""
        if self.solid:
            return True
        if self.surface and frame_kind == "solid":
            return False
        return self.geometry in ("any", frame_kind) and (
            self.orientation in ("any", orientation) or orientation == "any"
        )


KINDS: tuple[FindingKind, ...] = (
    FindingKind(
        "coincident_nodes",
        "fail",
        "places",
        "distinct nodes at the same place (within the tolerance): not merged, shells and "
        "solids alike; counted by place (a cluster of nodes at one place counts once, "
        "whatever its size)",
        "unmerged nodes cut the load path; the solver sees two parts (common practice)",
        surface=False,
    ),
    FindingKind(
        "crack_edges",
        "fail",
        "free edges",
        "free edges lying on other free edges: an unintended cut inside the part",
        "the part is split along them; loads do not cross (common practice)",
    ),
    FindingKind(
        "hanging_nodes",
        "fail",
        "nodes",
        "corner nodes lying inside another element's free edge (solids: inside a free "
        "face or its edge): a non-conforming interface (a coarse element beside finer "
        "ones) with no shared node there",
        "the two sides are not connected unless the solver constrains the hanging nodes; "
        'set "info" where the interface is tied on purpose (common practice)',
        surface=False,
    ),
    FindingKind(
        "orphan_nodes",
        "warn",
        "nodes",
        "nodes that no cell uses",
        "they carry no stiffness: some solvers stop on a singular matrix, others drop "
        "them (common practice)",
        surface=False,
    ),
    FindingKind(
        "duplicate_elements",
        "fail",
        "elements",
        "elements on the same corner nodes as an earlier element of their dimension (any "
        "order or rotation)",
        "stiffness and mass are counted twice (common practice)",
        surface=False,
    ),
    FindingKind(
        "overlapping_elements",
        "fail",
        "element pairs",
        "element pairs covering a common area without sharing their node set (planar meshes)",
        "material is counted twice where they overlap (common practice)",
        "planar",
    ),
    FindingKind(
        "inconsistent_winding",
        "fail",
        "elements",
        "planar mesh: elements wound clockwise about +z (the elements flagged reversed)",
        "a 2-D solver reads x and y, so it sees them inverted, negative det J (common practice)",
        "planar",
        "+z",
    ),
    FindingKind(
        "opposite_normals",
        "warn",
        "elements",
        "shell, or planar mesh whose plane contains z: elements facing against the rest of "
        "their patch (the elements flagged flipped_normal)",
        "shell solvers accept either normal, but top/bottom results, pressures and offsets "
        "flip across the seam (common practice)",
        "any",
        "relative",
    ),
    FindingKind(
        "non_manifold_edges",
        "warn",
        "edges",
        "edges shared by more than two elements",
        "intended at shell T-joints (stiffeners), a defect in a plane model (common practice)",
    ),
    FindingKind(
        "crack_faces",
        "fail",
        "free faces",
        "free faces of solids lying on other free faces (same corner places, distinct "
        "nodes): an unintended cut inside the part",
        "the part is split along them; loads do not cross (common practice)",
        surface=False,
        solid=True,
    ),
    FindingKind(
        "non_manifold_faces",
        "fail",
        "faces",
        "faces shared by more than two solids",
        "material on one side of a face is counted twice: solids overlap (common practice)",
        surface=False,
        solid=True,
    ),
    FindingKind(
        "non_conforming_faces",
        "fail",
        "free faces",
        "free faces of solids lying on other free faces without matching them: a "
        "non-conforming interface (hanging nodes, a quadrilateral face against two "
        "triangles)",
        "the two sides are not connected unless the solver ties them; set "
        '"info" (with hanging_nodes) where the interface is tied on purpose (common practice)',
        surface=False,
        solid=True,
    ),
    FindingKind(
        "inside_out_solids",
        "fail",
        "elements",
        "solids inside out relative to their neighbours: a face two solids share is used "
        "the same way round by both (each solid's faces point outward when it is "
        "positively oriented); the message says which of them have negative det J",
        "an inverted solid has negative stiffness; a solid folded over its neighbour "
        "counts material twice (common practice)",
        surface=False,
        solid=True,
    ),
    FindingKind(
        "internal_voids",
        "info",
        "voids",
        "closed surfaces of free faces inside the part (their faces point into the hole)",
        "a cavity is often the design (a bore, a pocket), and is reported so that an "
        "unintended one (a missing element) is seen (common practice)",
        surface=False,
        solid=True,
    ),
    FindingKind(
        "shells_on_solid_faces",
        "info",
        "elements",
        "shell elements on the same corner nodes as a face of a solid (a skin or coating)",
        "a normal way to model a coating or to apply loads and read stresses on the "
        "surface; reported so that an unintended one is seen (common practice)",
        surface=False,
        solid=True,
    ),
    FindingKind(
        "unaudited_cells",
        "warn",
        "cells",
        "surface or volume cells of a type meshaudit does not measure (polygons, polyhedra, "
        "types it does not know): "
        "their quality is unknown",
        'a pass says nothing about them, so it is never silent; set "fail" where every '
        "element must be audited (common practice: a gate reports what it did not check)",
        surface=False,
    ),
    FindingKind(
        "constant_strain_failure",
        "fail",
        "elements",
        "with a material: elements that do not reproduce a constant strain field (nodal "
        "displacements u = eps x give strains off eps, or det J <= 0, at a Gauss point)",
        "the patch test: an element that fails it does not converge to the right answer "
        "however fine the mesh (common practice)",
        surface=False,
        material=True,
    ),
    FindingKind(
        "small_time_step",
        "warn",
        "elements",
        "with a material: elements whose stable time step is below 1/10 of the mesh's median",
        "they set the step of an explicit run for the whole mesh (common practice; the "
        "1/10 is a meshaudit default, no published source)",
        surface=False,
        material=True,
    ),
)
KIND_INFO: dict[str, FindingKind] = {k.name: k for k in KINDS}
KIND_NAMES: tuple[str, ...] = tuple(k.name for k in KINDS)
#: Kinds found on the solids' corner sets and face table (the face table is built only
#: when one of them is enabled).
SOLID_FACE_KINDS: tuple[str, ...] = (
    "duplicate_elements",
    "hanging_nodes",
    *(k.name for k in KINDS if k.solid),
)
#: Kinds found by the checks that look at nodes and connectivity (the others need no
#: mesh pass: ``unaudited_cells`` is read off the cell counts).
MESH_CHECK_KINDS: tuple[str, ...] = tuple(
    k.name for k in KINDS if k.name != "unaudited_cells" and not k.material
)


def default_severities() -> dict[str, str]:
    return {k.name: k.severity for k in KINDS}


@dataclass(frozen=True)
class FindingSettings:
    """Severity of each finding kind plus the two tolerances of the mesh-level checks."""

    severity: dict[str, str] = field(default_factory=default_severities)
    coincident_tolerance: float = COINCIDENT_TOLERANCE
    overlap_fraction: float = OVERLAP_FRACTION

    def enabled(self, kind: str) -> bool:
        return self.severity.get(kind, KIND_INFO[kind].severity) != "off"

    def to_dict(self) -> dict[str, object]:
        return {
            "severity": dict(self.severity),
            "coincident_tolerance": self.coincident_tolerance,
            "overlap_fraction": self.overlap_fraction,
        }
