"""Drawing prints nothing: no matplotlib warning about its configuration directory, a
missing glyph or math text, no numpy warning about overflow in the colour scale.

Each command runs in a fresh Python process whose home directory is read-only and whose
MPLCONFIGDIR (and XDG directories) cannot be created (their parent is a regular file, so
not even the superuser can write there), with a mesh file name and a profile name holding
characters the default font lacks and dollar signs (which would start matplotlib's math
mode). Checked: the standard error stream is empty (POSIX streams: a warning is text on
stderr) and the PNG files have the PNG signature (PNG specification, section 5.2).
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

import meshio
import numpy as np
import pytest
from conftest import SAMPLES

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
NAME = "plate_\u677f_$x^2$_\u03be"  # a CJK character, a math-mode pair, a Greek letter


@pytest.fixture
def locked(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """This process's environment (which run_cli hands on) with a read-only home and
    matplotlib and XDG directories that cannot be created."""
    home = tmp_path / "home"
    home.mkdir()
    home.chmod(stat.S_IRUSR | stat.S_IXUSR)
    blocker = tmp_path / "a-file"
    blocker.write_text("not a directory\n")
    for key in list(os.environ):
        if key.startswith(("MPL", "XDG_")):
            monkeypatch.delenv(key)
    monkeypatch.setenv("HOME", str(home))
    monkeypatch.setenv("MPLCONFIGDIR", str(blocker / "matplotlib"))
    monkeypatch.setenv("XDG_CONFIG_HOME", str(blocker / "config"))
    monkeypatch.setenv("XDG_CACHE_HOME", str(blocker / "cache"))
    monkeypatch.setenv("PYTHONWARNINGS", "default")  # every warning shown, none filtered
    yield
    home.chmod(stat.S_IRWXU)


def _huge_mesh(path: Path) -> None:
    # areas near the largest double and infinite: the colour scale must not overflow
    points = np.array([[0, 0], [1, 0], [1, 1], [0, 1], [3, 0], [3, 1]], dtype=float) * 1e154
    cells = np.array([[0, 1, 2, 3], [1, 4, 5, 2]])
    meshio.write(path, meshio.Mesh(points, [("quad", cells)]))


@pytest.mark.parametrize(
    "source, element, color_by",
    [
        ("defects", 293, "jacobian_ratio"),  # infinite for the inverted elements
        ("defects", 293, "score"),
        ("huge", 0, "area"),
        ("crack_tip", 10, "det_j_min"),
    ],
)
def test_plots_print_nothing(source, element, color_by, tmp_path, locked, run_cli) -> None:
    mesh = tmp_path / f"{NAME}.{'vtu' if source != 'defects' else 'msh'}"
    if source == "defects":
        mesh.write_bytes((SAMPLES / "bracket_plate_defects.msh").read_bytes())
    elif source == "crack_tip":
        mesh.write_bytes((SAMPLES / "bracket_crack_tip.vtu").read_bytes())
    else:
        _huge_mesh(mesh)
    profile = tmp_path / "profile.toml"
    profile.write_text('name = "\u03b2 \u677f $a$"\n', encoding="utf-8")
    plot, html, one = tmp_path / "mesh.png", tmp_path / "mesh.html", tmp_path / "one.png"
    common = ["--profile", profile, "--no-config"]
    done = run_cli(
        "check",
        mesh,
        "--plot",
        plot,
        "--html",
        html,
        "--color-by",
        color_by,
        "--quiet",
        *common,
        cwd=tmp_path,
    )
    assert done.returncode in (0, 1), done.stderr
    assert done.stderr == ""
    assert plot.read_bytes()[:8] == PNG_SIGNATURE
    done = run_cli("explain", mesh, element, "--plot", one, *common, cwd=tmp_path)
    assert done.returncode in (0, 1), done.stderr
    assert done.stderr == ""
    assert one.read_bytes()[:8] == PNG_SIGNATURE
