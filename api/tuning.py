"""Process-wide tuning, done once when a server process (or a local evaluation) starts.

**Freed memory kept for reuse.** A calculator on a large batch makes many short-lived arrays of
megabytes (one float per rig each). glibc's allocator hands blocks that big straight to the kernel
(``mmap``) and gives them back on ``free``, so every such temporary costs a fresh set of page faults:
on a flat batch of a million rigs through the six core calculators that was more CPU time than the
arithmetic. :func:`keep_freed_memory` raises glibc's mmap and trim thresholds (``mallopt``,
``M_MMAP_THRESHOLD`` and ``M_TRIM_THRESHOLD``, see mallopt(3)) so that blocks below
:data:`KEEP_BYTES` come from the heap and freed ones are reused. The price: a process keeps up to that
much freed memory instead of returning it at once. Elsewhere than glibc it does nothing.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import platform

#: Largest block served from the heap, and most freed memory kept at its top, in bytes.
KEEP_BYTES = 512 * 1024 * 1024

# From glibc's <malloc.h>.
_M_TRIM_THRESHOLD = -1
_M_MMAP_THRESHOLD = -3


def keep_freed_memory(keep_bytes: int = KEEP_BYTES) -> bool:
    """Let glibc reuse freed blocks below ``keep_bytes`` instead of unmapping them; True if applied."""
    if platform.system() != "Linux" or platform.libc_ver()[0] != "glibc":
        return False
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return False
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    return bool(mallopt(_M_MMAP_THRESHOLD, keep_bytes)) and bool(mallopt(_M_TRIM_THRESHOLD, keep_bytes))
