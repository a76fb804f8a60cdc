"""Process-wide tuning, done once when a server process (or a local evaluation) starts.

**Freed memory kept for reuse.** A calculator on a large batch makes many short-lived arrays of
megabytes (one float per rig each). glibc's allocator hands blocks that big straight to the kernel
(``mmap``) and gives them back on ``free``, so every such temporary costs a fresh set of page faults:
on a flat batch of a million rigs through the six core calculators that was more CPU time than the
arithmetic. :func:`keep_freed_memory` raises glibc's mmap and trim thresholds (``mallopt``,
``M_MMAP_THRESHOLD`` and ``M_TRIM_THRESHOLD``, see mallopt(3)) so that blocks below
:data:`KEEP_BYTES` come from the heap and freed ones are reused. The price: a process keeps up to that
much freed memory instead of returning it at once. Elsewhere than glibc it does nothing.

**Start-up objects out of the collector's way.** After start-up a process holds a few hundred
thousand long-lived objects (modules, the app, its routes and pydantic schemas, the registry). Each
full collection of the cyclic garbage collector walks all of them, a pause of milliseconds that lands
on whichever requests are in flight, the slow tail of a busy server. :func:`freeze_start_up_objects`
collects once and then moves every object alive into the collector's permanent generation
(``gc.freeze()``), so later collections walk only what requests create. Only the first app of a
process does it (a test run builds hundreds of apps, which must stay collectable).
"""

from __future__ import annotations

import ctypes
import ctypes.util
import gc
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


def freeze_start_up_objects() -> bool:
    """``gc.collect()`` then ``gc.freeze()``, once per process; True if it froze now."""
    if gc.get_freeze_count():
        return False
    gc.collect()
    gc.freeze()
    return True
