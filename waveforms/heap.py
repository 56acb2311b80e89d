"""Freed memory handed back to the operating system between the stages of a run.

numpy's per-cycle arrays of an hour-long capture (about 1.4 MB each for 180 000 cycles) are
allocated from the C library's heap once its adaptive threshold for separate memory maps
has risen; freed, they stay in the process's resident set until the heap is trimmed.  The
stages of `waveforms.recipe.run_recipe` leave many such arrays behind (the detectors', the
thermal model's), so the resident peak grew with the capture by more than what the
stages keep.  `trim` asks glibc to return the free pages (``malloc_trim``); on other C
libraries it does nothing.  Measured on the 60-minute benchmark capture
(benchmarks/README.md, "Long captures"): peak RSS 500 -> 463 MB in-process.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import functools
from typing import Any


@functools.lru_cache(maxsize=1)
def _malloc_trim() -> Any:
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        fn = libc.malloc_trim
    except (OSError, AttributeError):  # not glibc (macOS, Windows, musl without it)
        return None
    fn.argtypes = [ctypes.c_size_t]
    fn.restype = ctypes.c_int
    return fn


def trim() -> bool:
    """Return the free pages of the C heap to the operating system; True when the C library can."""
    fn = _malloc_trim()
    if fn is None:
        return False
    fn(0)
    return True
