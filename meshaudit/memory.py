"""Process-wide memory settings for the command line (not applied on library import).

Large numpy arrays come from the C allocator. glibc serves blocks above a threshold
with their own memory maps, returned to the system as soon as they are freed, but it
raises that threshold each time such a block is freed, after which big arrays are cut
from the heap, where freed space is kept (per thread) instead of returned. An audit
allocates and frees many arrays of a few to a few tens of MB in turn, so with the
moving threshold the resident size grows well past what is live at any moment.
Fixing the threshold keeps the resident size close to the live arrays.
"""

from __future__ import annotations

import ctypes
import sys

#: glibc's ``mallopt`` parameter number for the map threshold (malloc.h).
_M_MMAP_THRESHOLD = -3

#: Blocks of this size and above get their own memory map: the per-element arrays of
#: meshes from about half a million elements, not the chunk temporaries (256 KiB each
#: at the default chunk size), which the heap reuses cheaply.
LARGE_BLOCK = 4 * 1024 * 1024


def return_large_blocks(threshold: int = LARGE_BLOCK) -> bool:
    """Fix glibc's map threshold at ``threshold`` bytes; False where that is not glibc."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL("libc.so.6")
        return bool(libc.mallopt(_M_MMAP_THRESHOLD, int(threshold)))
    except (OSError, AttributeError):
        return False
