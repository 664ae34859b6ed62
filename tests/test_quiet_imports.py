"""``meshaudit check --quiet`` loads no terminal library of its own.

meshio itself imports rich's console when it is imported (its warnings print with
it), so the check is: the rich modules loaded by a quiet audit are exactly those a bare
``import meshio`` loads. Its tables, text layout and progress bar (``rich.table``,
``rich.progress``, ``rich.box``, ...) stay unloaded. Checked in fresh interpreters
(``sys.modules``), on the bundled sample that passes and the one that fails.
"""

from __future__ import annotations

import subprocess
import sys

import pytest
from conftest import REPO

LISTED = "print(sorted(m for m in sys.modules if m == 'rich' or m.startswith('rich.')))\n"


def loaded_rich(code: str) -> tuple[list[str], subprocess.CompletedProcess]:
    res = subprocess.run(
        [sys.executable, "-c", "import sys\n" + code + LISTED],
        capture_output=True,
        text=True,
        cwd=REPO,
    )
    return eval(res.stdout.strip().splitlines()[-1]), res  # a printed list of names


@pytest.mark.parametrize(
    ("sample", "status"), [("bracket_plate.msh", 0), ("bracket_plate_defects.msh", 1)]
)
def test_quiet_check_loads_no_rich_module_beyond_what_meshio_loads(sample, status):
    bare, _ = loaded_rich("import meshio\n")
    quiet, res = loaded_rich(
        "from meshaudit.cli import main\n"
        f"status = main(['check', 'samples/{sample}', '--quiet'])\n"
        "print(status)\n"
    )
    assert res.stdout.splitlines()[-2] == str(status), res.stderr
    verdict = res.stdout.splitlines()[0]
    assert verdict.startswith("PASS  " if status == 0 else "FAIL  ")
    assert "\x1b" not in verdict  # not a terminal: no styling
    assert set(quiet) == set(bare)
    assert "rich.table" not in quiet and "rich.progress" not in quiet


def test_full_report_still_draws_tables_with_rich():
    # the control: without --quiet the tables are drawn, so rich.table is loaded
    full, res = loaded_rich(
        "from meshaudit.cli import main\nmain(['check', 'samples/bracket_plate.msh'])\n"
    )
    assert "rich.table" in full, res.stderr
