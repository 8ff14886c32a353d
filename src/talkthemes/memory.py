"""Handing freed memory back to the operating system between the stages of a long run.

The corpus phase of ``prepare`` (and a refresh, which prepares again) allocates and frees
arrays as large as the corpus, one step after another. The C allocator keeps much of what
was freed for reuse inside the process, so the resident size grows by the garbage of every
step, and the next step's large arrays (which the allocator maps afresh) cannot use it.
:func:`release_free_memory` asks glibc's ``malloc_trim`` to return it; elsewhere (musl,
macOS) it does nothing.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import functools
import sys

__all__ = ["release_free_memory"]


@functools.cache
def _trim() -> object | None:
    if not sys.platform.startswith("linux"):
        return None
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        return libc.malloc_trim
    except (OSError, AttributeError):  # not glibc
        return None


def release_free_memory() -> bool:
    """Return freed heap memory to the operating system; whether it could be asked."""
    trim = _trim()
    if trim is None:
        return False
    trim(0)
    return True
