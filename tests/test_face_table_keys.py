"""The face table groups face uses by their corner sets, whichever key it sorts.

Reference outside the face table's own code: numpy's ``unique`` of the sorted corner rows
(``axis=0``: a plain lexicographic comparison of rows), which gives each distinct face,
its uses and the lexicographic order the table numbers its faces in. Checked on face
uses numbered with locality (short steps between corners: one packed key per use) and
on nodes numbered at random over a wide range (the two (node, node) halves).
"""

from __future__ import annotations

import numpy as np
import pytest

from meshaudit.mesh.faces import table_of_uses


def _uses(rng: np.random.Generator, n_faces: int, n_points: int, spread: int) -> np.ndarray:
    """Corner rows (m, 4) of random faces, each used once to three times in random
    order and direction; quadrilaterals and triangles (-1 fourth), corners distinct."""
    base = rng.integers(0, n_points - spread, n_faces)
    offsets = np.array([rng.choice(spread, 4, replace=False) for _ in range(n_faces)])
    faces = base[:, None] + offsets
    tri = rng.random(n_faces) < 0.3
    faces[tri, 3] = -1
    repeat = rng.integers(1, 4, n_faces)
    rows = np.repeat(faces, repeat, axis=0)
    rows = rows[rng.permutation(rows.shape[0])]
    for i, row in enumerate(rows):  # each use in its own direction and starting corner
        k = 3 if row[3] < 0 else 4
        turned = np.roll(row[:k], rng.integers(k))
        rows[i, :k] = turned if rng.random() < 0.5 else turned[::-1]
    return rows


@pytest.mark.parametrize(
    ("n_points", "spread"),
    [(5_000, 40), (2_000_000_000, 1_000_000_000)],
    ids=["short steps", "wide numbering"],
)
def test_faces_are_numpys_unique_rows(n_points: int, spread: int) -> None:
    rng = np.random.default_rng(3)
    rows = _uses(rng, 400, n_points, spread)
    m = rows.shape[0]
    table = table_of_uses(rows, np.arange(m), np.zeros(m, dtype=np.int8), n_points)
    ref_rows = np.sort(rows, axis=1)  # -1 padding first, as the table keys faces
    keys, inverse, counts = np.unique(
        ref_rows, axis=0, return_inverse=True, return_counts=True
    )  # numpy: rows in lexicographic order
    inverse = inverse.ravel()
    assert np.array_equal(table.key, keys)
    assert np.array_equal(table.face, inverse)
    assert np.array_equal(table.uses, counts)
    position = np.arange(m)
    first = np.full(keys.shape[0], m)
    last = np.full(keys.shape[0], -1)
    np.minimum.at(first, inverse, position)
    np.maximum.at(last, inverse, position)
    assert np.array_equal(table.first, first)
    assert np.array_equal(table.last, last)
