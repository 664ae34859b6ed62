"""Shared fixtures: run the CLI from this checkout and build small meshes."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import settings

# In CI the property tests draw the same examples every run, so a red build is reproducible.
settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")

REPO = Path(__file__).resolve().parents[1]
SAMPLES = REPO / "samples"


@pytest.fixture
def run_cli():
    """Run ``python -m meshaudit ARGS`` on this checkout's code; returns CompletedProcess."""

    def run(*args: str | os.PathLike[str], cwd: Path | None = None) -> subprocess.CompletedProcess:
        env = dict(os.environ)
        env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
        env.setdefault("COLUMNS", "120")
        return subprocess.run(
            [sys.executable, "-m", "meshaudit", *map(str, args)],
            capture_output=True,
            text=True,
            cwd=cwd,
            env=env,
            timeout=300,
        )

    return run
