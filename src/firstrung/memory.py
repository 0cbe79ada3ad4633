"""The process's memory: giving freed memory back to the system after a large read.

A long log is read in chunks whose cells are many small Python strings; once they have become
arrays, the C library keeps their freed memory for the process instead of returning it, and the
arrays that follow (which the C library maps afresh) cannot use it. :func:`release_free_memory`
hands it back, so a million-row reduction holds its arrays, not its read's leftovers.
"""

from __future__ import annotations

import contextlib
import functools
import gc

__all__ = ["no_cycle_collection", "release_free_memory", "repeated_object", "resident_mb"]


@functools.cache
def _trim():
    """glibc's ``malloc_trim``, or None elsewhere (musl, macOS, Windows: nothing to do there).

    Looked up among the symbols the process already has (the C library it runs on), not by
    ``ctypes.util.find_library``, which starts ``ldconfig`` to find the library's file.
    """
    import ctypes  # only when memory is given back (after a large read)

    try:
        trim = ctypes.CDLL(None).malloc_trim
    except (OSError, AttributeError, TypeError):
        return None
    trim.argtypes = [ctypes.c_size_t]
    trim.restype = ctypes.c_int
    return trim


def repeated_object(value, n: int):
    """An object array of ``n`` references to one ``value``: ``np.full(n, text, dtype=object)`` holds a copy
    of the text for every element (a million-row log's file name: 60 MB of copies, not 8 MB of pointers).

    >>> a = repeated_object("logs/shadows.csv", 3)
    >>> a.tolist(), a[0] is a[2]
    (['logs/shadows.csv', 'logs/shadows.csv', 'logs/shadows.csv'], True)
    """
    import numpy as np

    out = np.empty(n, dtype=object)
    out.fill(value)
    return out


@contextlib.contextmanager
def no_cycle_collection():
    """Within this block the garbage collector's cycle search does not run (reference counting still frees),
    and what the block made is not searched afterwards either: it joins the oldest objects unsearched.

    For a block that makes hundreds of thousands of small objects without cycles (a long log's series as
    result records): each few hundred new objects start a search of the young ones, and the searches, each
    moving them a generation older, cost a million-row reduction half a second and found nothing. On leaving,
    every object the collector follows is moved to its oldest generation at once (``gc.freeze`` then
    ``gc.unfreeze``: two list splices, nothing searched); a cycle among them is still freed by the next full
    search. The collector is enabled afterwards if it was before.
    """
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        gc.freeze()
        gc.unfreeze()
        if was:
            gc.enable()


def release_free_memory() -> bool:
    """Return the C library's freed memory to the system; whether that could be asked (glibc only)."""
    trim = _trim()
    if trim is None:
        return False
    trim(0)
    return True


def resident_mb() -> float | None:
    """The process's resident memory now [MiB] (Linux's ``/proc/self/statm``), or None where it is not known."""
    import os

    try:
        with open("/proc/self/statm") as f:
            pages = int(f.read().split()[1])
    except (OSError, ValueError, IndexError):
        return None
    return pages * os.sysconf("SC_PAGE_SIZE") / 2**20
