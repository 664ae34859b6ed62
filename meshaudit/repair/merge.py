"""Merging coincident nodes that crack the part.

The audit's ``coincident_nodes`` finding groups distinct nodes at one place (within its
tolerance, see the README's "Mesh-level findings"); each place has a representative, the
node read first. Merging makes every cell use the representative instead of the other
nodes of its place, which closes the crack their free edges opened. The merged-away
nodes are then used by nothing (orphans, dropped with the orphans).

An intended crack is kept: the profile that says so (``coincident_nodes`` or
``crack_edges`` set to ``info`` or ``off`` under ``[findings]``, as
``samples/crack_faces_intended.toml`` does) merges nothing.
"""

from __future__ import annotations

import numpy as np

from ..mesh_checks.findings import Finding

#: Severities under which coincident nodes are a defect to repair.
REPAIRED = ("warn", "fail")


def intended(severity: dict[str, str]) -> bool:
    """Whether the profile's finding severities say unmerged nodes are on purpose."""
    return any(severity.get(k) in ("info", "off") for k in ("coincident_nodes", "crack_edges"))


def merge_target(
    finding: Finding | None, node_numbers: np.ndarray, n_points: int
) -> tuple[np.ndarray, int]:
    """(target (n_points,), merged count): node i is to be replaced by node target[i].

    ``finding``: the audit's ``coincident_nodes`` finding (its ``pairs`` are node numbers:
    representative, other node); ``node_numbers`` (n_points,) the number of every node.
    """
    target = np.arange(n_points, dtype=np.int64)
    if finding is None or finding.severity not in REPAIRED or len(finding.pairs) == 0:
        return target, 0
    order = np.argsort(node_numbers, kind="stable")
    ranked = node_numbers[order]

    def index_of(numbers: np.ndarray) -> np.ndarray:
        pos = np.searchsorted(ranked, numbers).clip(max=len(ranked) - 1)
        if not np.array_equal(ranked[pos], numbers):
            raise ValueError("a coincident node number is not a node of the mesh")
        return order[pos]

    rep = index_of(finding.pairs[:, 0])
    other = index_of(finding.pairs[:, 1])
    target[other] = rep
    target = target[target]  # a representative is never itself merged away
    return target, int(np.count_nonzero(target != np.arange(n_points)))
