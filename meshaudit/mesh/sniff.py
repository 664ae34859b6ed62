"""A guess at a mesh file's format from its first bytes, for the hint of an error message
when a file's extension names another format than its content."""

from __future__ import annotations

import os

#: (bytes the head of the file contains, meshio format name), first match wins.
SIGNS: tuple[tuple[bytes, str], ...] = (
    (b"$MeshFormat", "gmsh"),
    (b"<VTKFile", "vtu"),
    (b"# vtk DataFile", "vtk"),
    (b"<Xdmf", "xdmf"),
    (b"MeshVersionFormatted", "medit"),
    (b"*HEADING", "abaqus"),
    (b"*NODE", "abaqus"),
    (b"*Node", "abaqus"),
    (b"BEGIN BULK", "nastran"),
    (b"GRID", "nastran"),
    (b"\x89HDF", "med"),
)

#: meshio format name -> the extensions that name it.
EXTENSIONS: dict[str, tuple[str, ...]] = {
    "gmsh": (".msh",),
    "vtu": (".vtu",),
    "vtk": (".vtk",),
    "xdmf": (".xdmf", ".xmf"),
    "medit": (".mesh", ".meshb"),
    "abaqus": (".inp",),
    "nastran": (".bdf", ".fem", ".nas"),
    "med": (".med",),
}


def guess_format(path: str | os.PathLike[str], head: int = 4096) -> str | None:
    """The meshio format the file's first ``head`` bytes look like, or None."""
    try:
        with open(path, "rb") as fh:
            data = fh.read(head)
    except OSError:
        return None
    for sign, name in SIGNS:
        if sign in data:
            return name
    return None


def format_hint(path: str | os.PathLike[str]) -> str:
    """'; it looks like gmsh: try --format gmsh' when the content looks like a format its
    extension does not name, else a plain reminder of --format."""
    guess = guess_format(path)
    ext = os.path.splitext(os.fspath(path))[1].lower()
    if guess is not None and ext not in EXTENSIONS.get(guess, ()):
        return f"; its content looks like {guess}, not {ext or 'its name'}: try --format {guess}"
    return "; if its extension does not name its format, give it with --format"
