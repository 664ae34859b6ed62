"""CPU time of the solid element kernels (``meshaudit.metrics.solid``), one family at a time.

``python -m benchmarks.solid_kernels --family NAME [--elements N] [--repeat R]`` hands the
options to the family's own benchmark module, which builds distorted elements of that family
from a block of the fictional bracket plate and times its ``measure`` in chunks of 32768
elements, as the engine passes them: ``tetra`` (:mod:`benchmarks.solid_tetra`), ``wedge``
and ``pyramid`` (:mod:`benchmarks.solid_prisms`), ``hexahedron``
(:mod:`benchmarks.solid_hex`). ``--family all`` runs every one.
"""

from __future__ import annotations

import importlib
import importlib.util
import sys

#: family -> benchmark module (each has ``main(argv)`` taking ``--family``)
MODULES = {
    "tetra": "benchmarks.solid_tetra",
    "wedge": "benchmarks.solid_prisms",
    "pyramid": "benchmarks.solid_prisms",
    "hexahedron": "benchmarks.solid_hex",
}


def main(argv: list[str] | None = None) -> None:
    argv = list(sys.argv[1:] if argv is None else argv)
    family = "all"
    if "--family" in argv:
        at = argv.index("--family")
        family = argv[at + 1]
        del argv[at : at + 2]
    families = [f for f in MODULES if importlib.util.find_spec(MODULES[f]) is not None]
    if family != "all":
        if family not in MODULES:
            raise SystemExit(f"--family must be one of {', '.join(MODULES)} or all")
        families = [family]
    for name in families:
        importlib.import_module(MODULES[name]).main([*argv, "--family", name])


if __name__ == "__main__":
    main()
