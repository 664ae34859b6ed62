"""matplotlib, set up so that drawing prints nothing.

- Figures get an Agg canvas of their own (:func:`new_figure`): no pyplot, no GUI backend,
  nothing changed in the caller's matplotlib state.
- Before matplotlib is first imported, :func:`prepare` checks that the directories it
  keeps its configuration and font cache in can be written; where they cannot (a
  read-only home, a container), ``MPLCONFIGDIR`` is pointed at a fresh temporary
  directory, removed at exit, instead of matplotlib warning that it made one itself.
- Text that comes from the mesh or the user (file, profile and region names) goes
  through :func:`drawable`: a ``$`` would start matplotlib's math mode, and a character
  the default font has no glyph for would be drawn as a box with a warning.
"""

from __future__ import annotations

import atexit
import logging
import os
import shutil
import sys
import tempfile
from functools import lru_cache
from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from matplotlib.figure import Figure

#: Put in place of a character the default font cannot draw.
MISSING = "?"


def _usable(path: Path) -> bool:
    """Whether ``path`` is (or can be made) a directory this process can write to."""
    try:
        path.mkdir(parents=True, exist_ok=True)
    except OSError:
        return False
    return path.is_dir() and os.access(path, os.W_OK | os.X_OK)


def _default_dirs() -> list[Path]:
    """The directories matplotlib would use for its configuration and cache."""
    own = os.environ.get("MPLCONFIGDIR")
    if own:
        return [Path(own)]
    home = Path.home()
    if sys.platform.startswith(("linux", "freebsd")):
        config = os.environ.get("XDG_CONFIG_HOME") or str(home / ".config")
        cache = os.environ.get("XDG_CACHE_HOME") or str(home / ".cache")
        return [Path(config) / "matplotlib", Path(cache) / "matplotlib"]
    return [home / ".matplotlib"]


@lru_cache(maxsize=1)
def prepare() -> None:
    """Call before matplotlib is first imported (later calls do nothing): where its
    configuration or cache directory cannot be written, give it a temporary one."""
    if "matplotlib" in sys.modules:
        return
    try:
        usable = all(_usable(d) for d in _default_dirs())
    except RuntimeError:  # no home directory at all
        usable = False
    if usable:
        return
    temporary = tempfile.mkdtemp(prefix="meshaudit-matplotlib-")
    atexit.register(shutil.rmtree, temporary, ignore_errors=True)
    os.environ["MPLCONFIGDIR"] = temporary
    # its font cache is built afresh there: say nothing if that takes a while
    logging.getLogger("matplotlib.font_manager").addFilter(_not_building_cache)


def _not_building_cache(record: logging.LogRecord) -> bool:
    return not str(record.msg).startswith("Matplotlib is building the font cache")


def new_figure(**options: Any) -> Figure:
    """A matplotlib figure on its own Agg canvas (PNG; SVG and PDF when saved as such)."""
    prepare()
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(**options)
    FigureCanvasAgg(fig)
    return fig


@lru_cache(maxsize=1)
def _glyphs() -> frozenset[int]:
    """Code points the default text font has a glyph for."""
    prepare()
    from matplotlib.font_manager import FontProperties, findfont
    from matplotlib.ft2font import FT2Font

    return frozenset(FT2Font(findfont(FontProperties())).get_charmap())


def drawable(text: str) -> str:
    """``text`` as matplotlib draws it literally and without warnings: ``$`` escaped (no
    math mode), characters the default font lacks (and control characters other than a
    line break) replaced by :data:`MISSING`."""
    glyphs = _glyphs()
    out = []
    for ch in str(text):
        if ch == "\n":
            out.append(ch)
        elif ch == "$":
            out.append(r"\$")
        elif ord(ch) < 32 or ord(ch) not in glyphs:
            out.append(MISSING)
        else:
            out.append(ch)
    return "".join(out)
