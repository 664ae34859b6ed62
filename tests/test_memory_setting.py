"""The allocator setting the command line makes (glibc only): freed large arrays are
given back to the system. Checked in fresh interpreters, against the resident size the
Linux kernel reports (/proc/self/statm), with and without the setting."""

import subprocess
import sys
import textwrap

import pytest

SCRIPT = textwrap.dedent(
    """
    import sys
    import numpy as np
    from meshaudit.engine.memory import return_large_blocks

    def resident_mb():
        with open("/proc/self/statm") as f:
            return int(f.read().split()[1]) * 4096 / 1e6

    if sys.argv[1] == "set":
        assert return_large_blocks()
    grown = 0.0
    for _ in range(6):
        before = resident_mb()
        a = np.ones(1_500_000)  # 12 MB, written so that its pages are resident
        del a
        grown = max(grown, resident_mb() - before)
    print(grown)
    """
)


def _growth(mode: str) -> float:
    done = subprocess.run(
        [sys.executable, "-c", SCRIPT, mode], capture_output=True, text=True, check=True
    )
    return float(done.stdout)


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="glibc and /proc only")
def test_freed_large_arrays_leave_the_process():
    # glibc's moving threshold: after the first 12 MB block is freed, the next one is cut
    # from the heap and stays resident when freed (common practice knowledge of glibc
    # malloc; its manual page describes the dynamic threshold)
    assert _growth("default") > 10.0
    assert _growth("set") < 2.0
