"""Pathological input: work and memory bounded by the mesh size.

Piles of coincident nodes are reported as clusters (one per place, k - 1 pairs for k
nodes), piles of elements are refused with one clear line, and a node no element uses
moves no grid. Every expected count comes from the construction of the mesh (said
beside it) or from shapely, brute force over every pair of elements; the work is
measured by counting candidate pairs through the checks' own functions (monkeypatched
counters), never by timing.
"""

from __future__ import annotations

import itertools
import json

import meshio
import numpy as np
import pytest

from meshaudit import audit
from meshaudit.errors import InputError
from meshaudit.mesh_checks import budget, nodes, overlap
from tests.finding_meshes import (
    NX,
    NY,
    boxes_meeting,
    grid_points,
    grid_quads,
    polygons,
    with_crack,
)


def found(report) -> dict:
    return {f.kind: f for f in report.findings}


def profile(tmp_path, **severities: str):
    path = tmp_path / "findings.toml"
    lines = [f'{kind} = "{sev}"' for kind, sev in severities.items()]
    path.write_text("[findings]\n" + "\n".join(lines) + "\n", encoding="utf-8")
    return path


def separate_quads(points: np.ndarray) -> meshio.Mesh:
    """Quads on nodes of their own: element k uses nodes 4k .. 4k + 3."""
    return meshio.Mesh(points, [("quad", np.arange(len(points)).reshape(-1, 4))])


def grid_at_one_point(n: int) -> meshio.Mesh:
    """An n x n quad grid (nodes shared as usual) with every node moved to (1, 2)."""
    pts = np.tile([1.0, 2.0], ((n + 1) ** 2, 1))
    i, j = np.meshgrid(np.arange(n), np.arange(n))
    n0 = (j * (n + 1) + i).ravel()
    return meshio.Mesh(pts, [("quad", np.stack([n0, n0 + 1, n0 + n + 2, n0 + n + 1], axis=1))])


@pytest.fixture
def sweep_pairs(monkeypatch):
    """Counts the candidate pairs the coincident-node sweep makes."""
    made: list[int] = []
    sweep = nodes._sweep

    def counting(key, tol, limit):
        first, second = sweep(key, tol, limit)
        made.append(0 if first is None else first.size)
        return first, second

    monkeypatch.setattr(nodes, "_sweep", counting)
    return made


def assert_one_cluster(finding, k: int) -> None:
    """One place, k nodes: k - 1 pairs, each (representative, node), the representative
    the smallest node number, every other node once."""
    assert finding.count == 1
    assert finding.node_ids.tolist() == list(range(k))
    assert finding.pairs.shape == (k - 1, 2)
    assert (finding.pairs[:, 0] == 0).all()
    assert finding.pairs[:, 1].tolist() == list(range(1, k))


# -- piles of coincident nodes: clusters, not pairs ------------------------------------


@pytest.mark.parametrize("k", [10_000, 100_000])
def test_identical_nodes_make_one_cluster_of_k_nodes(k, sweep_pairs):
    # By construction: k / 4 quads whose k nodes all sit at (1, 1): one place.
    report = audit(separate_quads(np.ones((k, 2))))
    f = found(report)
    assert_one_cluster(f["coincident_nodes"], k)
    assert report.verdict_counts()["fail"] == k // 4  # each quad collapsed to a point
    assert "crack_edges" not in f  # every free edge joins the place to itself
    assert sum(sweep_pairs) == 0  # exact copies are grouped by sorting: one place is swept


def test_a_grid_moved_to_one_point_is_one_cluster(sweep_pairs):
    # By construction: a 100 x 100 grid (101^2 = 10201 nodes) with every node at one point.
    report = audit(grid_at_one_point(100))
    f = found(report)
    assert_one_cluster(f["coincident_nodes"], 101**2)
    assert "crack_edges" not in f and "hanging_nodes" not in f
    assert "overlapping_elements" not in f  # collapsed elements cover no area
    assert report.verdict_counts()["fail"] == 100**2
    assert sum(sweep_pairs) == 0


def test_stacked_copies_make_one_cluster_per_place():
    # By construction: the NX x NY test grid laid down 5 times, each copy on nodes of its
    # own (node p of copy c is p + c * places). The coincident-node search looks at the
    # nodes of free edges and the nodes near them (README, Mesh-level findings): each
    # copy's outline is free, so its 2 (NX + NY) outline places are found, 5 nodes each;
    # the interior places (every node there in a closed fan of its own copy) are not.
    pts, quads = grid_points(NX, NY), grid_quads(NX, NY)
    places, copies = len(pts), 5
    mesh = meshio.Mesh(
        np.tile(pts, (copies, 1)), [("quad", np.vstack([quads + c * places for c in range(5)]))]
    )
    report = audit(mesh, profile=None)
    finding = found(report)["coincident_nodes"]
    x, y = pts[:, 0], pts[:, 1]
    outline = (x == x.min()) | (x == x.max()) | (y == y.min()) | (y == y.max())
    assert outline.sum() == 2 * (NX + NY)
    assert finding.count == outline.sum()
    assert finding.pairs.shape == (outline.sum() * (copies - 1), 2)  # k - 1 = 4 per place
    rep, other = finding.pairs[:, 0], finding.pairs[:, 1]
    assert (other % places == rep).all() and (rep < places).all()
    assert sorted(set(rep.tolist())) == np.flatnonzero(outline).tolist()
    assert (np.bincount(rep)[outline] == copies - 1).all()
    want = sorted(int(p + c * places) for p in np.flatnonzero(outline) for c in range(1, copies))
    assert sorted(other.tolist()) == want


def test_distinct_nodes_within_the_tolerance_make_one_cluster_per_place(sweep_pairs, tmp_path):
    # By construction: 400 unit squares on nodes of their own, each moved by up to 1e-9
    # (well inside 1e-6 x the unit edge): 4 places of 400 distinct nodes each. The sweep
    # compares distinct places only: at most 400^2 / 2 pairs per corner place.
    rng = np.random.default_rng(3)
    square = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], dtype=float)
    pts = np.tile(square, (400, 1)) + rng.uniform(-1e-9, 1e-9, size=(1600, 2))
    off = profile(tmp_path, overlapping_elements="off")  # 79,800 overlapping pairs
    finding = found(audit(separate_quads(pts), profile=off))["coincident_nodes"]
    assert finding.count == 4
    rep = finding.pairs[:, 0]
    assert sorted(np.bincount(rep)[np.unique(rep)].tolist()) == [399] * 4
    assert (finding.pairs[:, 1] % 4 == rep % 4).all()  # a node joins its own corner's place
    assert sum(sweep_pairs) <= 4 * 400 * 399 // 2


def test_a_pile_of_distinct_nodes_past_the_budget_is_refused(monkeypatch, tmp_path):
    # The guard itself, with a small budget: the same jittered pile stops the audit with
    # one line naming the place and the finding kinds to turn off.
    monkeypatch.setattr(budget, "PAIR_BUDGET", 1000)
    monkeypatch.setattr(budget, "PER_ITEM", 1)
    rng = np.random.default_rng(4)
    square = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], dtype=float)
    pts = np.tile(square, (200, 1)) + rng.uniform(-1e-9, 1e-9, size=(800, 2))
    off = profile(tmp_path, overlapping_elements="off")
    with pytest.raises(InputError) as err:
        audit(separate_quads(pts), profile=off)
    text = str(err.value)
    assert text.startswith("coincident-node check: ")
    assert "near (" in text and "\n" not in text
    assert 'set coincident_nodes, crack_edges and hanging_nodes = "off"' in text


@pytest.fixture
def clustered(monkeypatch):
    """Records how many nodes the coincident-node check clusters, per call."""
    sizes: list[int] = []
    cluster = nodes.coincident_clusters

    def recording(points, candidates, *args, **kwargs):
        sizes.append(candidates.size)
        return cluster(points, candidates, *args, **kwargs)

    monkeypatch.setattr(nodes, "coincident_clusters", recording)
    return sizes


def test_with_coincident_nodes_off_only_free_edge_ends_are_clustered(clustered, tmp_path):
    # By construction: grid line 2 duplicated from node 2 to 4 (a slit inside the part).
    # Cracks need the free edges' ends only: the boundary's 2 (NX + NY) nodes and the
    # slit's 5 + 3 (its two tips are shared); the crack edges are found all the same.
    mesh, _, _ = with_crack(2, 4)
    report = audit(mesh, profile=profile(tmp_path, coincident_nodes="off"))
    f = found(report)
    assert "coincident_nodes" not in f
    assert f["crack_edges"].count == 8
    assert clustered == [2 * (NX + NY) + 8]


def test_with_every_check_that_needs_clusters_off_none_are_made(clustered, tmp_path):
    mesh, _, _ = with_crack(2, 4)
    off = profile(tmp_path, coincident_nodes="off", crack_edges="off", hanging_nodes="off")
    report = audit(mesh, profile=off)
    assert report.findings == []
    assert clustered == []


# -- piles of elements: a bounded overlap check --------------------------------------------


@pytest.fixture
def measured(monkeypatch):
    """Counts the candidate pairs shapely measures in the overlap check."""
    import shapely

    pairs: list[int] = []
    intersection = shapely.intersection

    def counting(a, b, *args, **kwargs):
        pairs.append(np.size(a))
        return intersection(a, b, *args, **kwargs)

    monkeypatch.setattr(shapely, "intersection", counting)
    return pairs


def test_random_quads_piled_in_a_small_area_are_refused_in_one_line(measured, tmp_path):
    # 4000 quads with random corners in the unit square: every box meets nearly every
    # other, some 8 million pairs. The check counts them before making them and stops.
    rng = np.random.default_rng(0)
    mesh = separate_quads(rng.random((16_000, 2)))
    with pytest.raises(InputError) as err:
        audit(mesh)
    text = str(err.value)
    assert text.startswith("overlap check: ") and "\n" not in text
    assert 'set overlapping_elements = "off" under [findings]' in text
    assert measured == []  # refused before shapely measures anything
    # the way out works: the rest of the audit runs
    report = audit(mesh, profile=profile(tmp_path, overlapping_elements="off"))
    assert report.verdict_counts()["fail"] > 0
    assert measured == []


def test_the_command_line_refuses_a_pile_with_one_line_and_no_report(run_cli, tmp_path):
    # The same kind of pile, from a file: exit status 2, one "meshaudit: error:" line on
    # stderr, no traceback and no report written; the way out audits it (exit status 1:
    # random quads are bow-ties and inverted).
    rng = np.random.default_rng(0)
    path = tmp_path / "bracket_pile.vtu"
    meshio.write(path, separate_quads(rng.random((16_000, 2))))
    out = tmp_path / "r.json"
    res = run_cli("check", path, "--json", out)
    assert res.returncode == 2
    (line,) = res.stderr.strip().splitlines()
    assert line.startswith("meshaudit: error: overlap check: ")
    assert line.endswith('set overlapping_elements = "off" under [findings] to audit without it')
    assert not out.exists()
    off = profile(tmp_path, overlapping_elements="off")
    res = run_cli("check", path, "--profile", off, "--json", out, "--quiet")
    assert res.returncode == 1 and out.exists()


def test_a_pile_the_grid_lets_through_is_refused_before_shapely_measures_it(measured):
    # 1000 random quads: within the grid's budget, but every pair left after the
    # convexity test would go to shapely (about 5 x 10^5): refused before any is measured.
    rng = np.random.default_rng(1)
    with pytest.raises(InputError, match=r'^overlap check: .* overlapping_elements = "off"'):
        audit(separate_quads(rng.random((4000, 2))))
    assert measured == []


def test_thousands_of_elements_on_one_edge_are_refused(tmp_path):
    # By construction: 2000 rectangles [0, 1] x [0, h_i] sharing their bottom edge (nodes
    # 0 and 1), with tops of their own: 2000 x 1999 / 2 pairs on one non-manifold edge.
    k = 2000
    h = 1.0 + np.arange(k) / k
    pts = np.vstack(
        [[[0, 0], [1, 0]], np.column_stack([np.ones(k), h]), np.column_stack([np.zeros(k), h])]
    )
    quads = np.stack([np.zeros(k), np.ones(k), 2 + np.arange(k), 2 + k + np.arange(k)], axis=1)
    mesh = meshio.Mesh(pts, [("quad", quads.astype(np.int64))])
    with pytest.raises(InputError, match=r"^overlap check: .*2,000 elements on one edge"):
        audit(mesh, profile=profile(tmp_path, hanging_nodes="off"))


@pytest.fixture
def grid_pairs(monkeypatch):
    """Counts the candidate pairs the grids hand out (overlap; hanging-node if on)."""
    made: list[int] = []
    batches = budget.batches

    def counting(lo, count):
        made.append(int(count.sum()))
        yield from batches(lo, count)

    monkeypatch.setattr(budget, "batches", counting)
    return made


def test_one_very_large_element_beside_a_fine_grid_costs_little(grid_pairs, tmp_path):
    # A 100 x 100 grid of unit squares beside one 300 x 300 square (its own nodes, no
    # overlap by construction). A grid sized by the largest element puts every fine
    # element in one cell: 10^4 x 10^4 candidate pairs.
    n = 100
    pts, quads = grid_points(n, n), grid_quads(n, n)
    big = np.array([[n + 1, 0], [n + 301, 0], [n + 301, 300], [n + 1, 300]], dtype=float)
    mesh = meshio.Mesh(
        np.vstack([pts, big]), [("quad", np.vstack([quads, len(pts) + np.arange(4)]))]
    )
    report = audit(mesh, profile=profile(tmp_path, hanging_nodes="off"))
    assert report.findings == []
    assert 0 < sum(grid_pairs) <= 16 * (n * n + 1)


@pytest.mark.parametrize("seed", range(3))
def test_scattered_squares_of_many_sizes_overlap_where_shapely_says(seed):
    # 150 squares with sides from 0.01 to 10 (log-uniform), scattered over a 20 x 20
    # area, each on nodes of its own: the grid enters the large ones in every cell they
    # cover. shapely, brute force over all pairs, is the reference.
    rng = np.random.default_rng(seed)
    side = 10.0 ** rng.uniform(-2, 1, size=150)
    corner = rng.uniform(0, 20, size=(150, 2))
    unit = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], dtype=float)
    pts = (corner[:, None, :] + side[:, None, None] * unit).reshape(-1, 2)
    cells = np.arange(600).reshape(-1, 4)
    finding = found(audit(meshio.Mesh(pts, [("quad", cells)]))).get("overlapping_elements")
    got = sorted(map(tuple, finding.pairs.tolist())) if finding else []
    polys = polygons(pts, cells)
    expected = [
        (a, b)
        for a, b in itertools.combinations(range(150), 2)
        if polys[a].intersection(polys[b]).area > 1e-3 * min(polys[a].area, polys[b].area)
    ]
    assert expected and got == expected


# -- a node no element uses moves no grid -----------------------------------------------------


OVERLAPPING = [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0.5, 0.5, 0], [1.5, 0.5, 0]]
OVERLAPPING += [[1.5, 1.5, 0], [0.5, 1.5, 0]]


@pytest.mark.parametrize(
    ("stray", "vertex"),
    [
        ([np.nan, 0.0, 0.0], False),
        ([np.inf, 0.0, 0.0], False),
        ([-np.inf, -np.inf, 0.0], False),
        ([0.0, 0.0, -np.inf], False),
        ([-1e18, 0.0, 0.0], True),
        ([1e300, 1e300, 0.0], True),
    ],
)
def test_a_stray_node_does_not_hide_an_overlap(run_cli, tmp_path, stray, vertex):
    # By construction: two unit squares overlapping by a quarter (shapely: 0.25), plus
    # one node no element uses (an orphan, or a vertex cell's node) far away or not finite.
    cells = [("quad", np.array([[0, 1, 2, 3], [4, 5, 6, 7]]))]
    if vertex:
        cells.append(("vertex", np.array([[8]])))
    path = tmp_path / "bracket_stray.vtu"
    meshio.write(path, meshio.Mesh(np.array([*OVERLAPPING, stray], dtype=float), cells))
    out = tmp_path / "r.json"
    res = run_cli("check", path, "--json", out, "--plot", tmp_path / "p.png", "--quiet")
    assert res.returncode == 1, res.stderr
    assert "RuntimeWarning" not in res.stderr and res.stderr == ""
    kinds = {f["kind"]: f for f in json.loads(out.read_text())["findings"]}
    assert kinds["overlapping_elements"]["pairs"] == [[0, 1]]
    polys = polygons(np.array(OVERLAPPING), [[0, 1, 2, 3], [4, 5, 6, 7]])
    assert polys[0].intersection(polys[1]).area == pytest.approx(0.25)
    assert ("orphan_nodes" in kinds) == (not vertex)


@pytest.mark.parametrize("seed", range(4))
def test_the_box_grid_finds_every_pair_of_overlapping_boxes(seed):
    # 600 boxes with sides from 0.001 to 30 (log-uniform, some thin) scattered over a
    # 100 x 100 area: pairs_near of every box against numpy, brute force over all pairs.
    rng = np.random.default_rng(seed)
    low = rng.uniform(0, 100, size=(600, 2))
    side = 10.0 ** rng.uniform(-3, 1.5, size=(600, 2))
    boxes = np.hstack([low, low + side])
    grid = overlap.BoxGrid.build(boxes)
    got = {tuple(p) for p in grid.pairs_near(np.arange(600)).tolist()}
    meet = boxes_meeting(boxes, 1e-9 * grid.h)
    expected = set(zip(*np.nonzero(meet)))
    assert expected and got == {(int(a), int(b)) for a, b in expected}
