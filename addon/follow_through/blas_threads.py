"""One BLAS thread while a bake runs, through the OpenBLAS that numpy has loaded.

The chain simulation calls numpy's linear algebra on small and mid-size
arrays; OpenBLAS then wakes one thread per core, which on a busy machine (or
inside Blender, whose own threads hold the cores) costs more than it gains.
numpy offers no switch for it, and no extra package is needed: the OpenBLAS
library numpy ships (``numpy.libs`` / ``.dylibs``, its symbols with or without
the ``scipy_`` prefix and ``64_`` suffix of the 64-bit-integer builds) exports
``openblas_set_num_threads``, called here through ctypes. When numpy uses
another BLAS (Accelerate, MKL) nothing is found and nothing is changed.
"""

import ctypes
import glob
import os
from contextlib import contextmanager

import numpy as np

#: Spellings of the two functions in OpenBLAS builds: plain, 64-bit-integer, and scipy's wheels.
_PREFIXES = ("scipy_openblas", "openblas")
_SUFFIXES = ("64_", "_64", "")

_FOUND: list = []  # [(get, set)] or [None] once looked up


def _library_paths():
    """Files that may hold numpy's OpenBLAS, most likely first."""
    here = os.path.dirname(np.__file__)
    paths = []
    try:
        with open("/proc/self/maps", encoding="utf-8") as maps:  # Linux: what is loaded now
            paths += [line.split()[-1] for line in maps if "openblas" in line.lower() and "/" in line]
    except OSError:
        pass
    for pattern in ("numpy.libs/*openblas*", "numpy/.dylibs/*openblas*", "numpy.libs/*OpenBLAS*"):
        paths += glob.glob(os.path.join(os.path.dirname(here), pattern))
    return list(dict.fromkeys(paths))


def _functions():
    """``(get_num_threads, set_num_threads)`` of the loaded OpenBLAS, or None."""
    if _FOUND:
        return _FOUND[0]
    found = None
    for path in _library_paths():
        try:
            lib = ctypes.CDLL(path)  # already loaded by numpy: the same library, not a second copy
        except OSError:
            continue
        for prefix in _PREFIXES:
            for suffix in _SUFFIXES:
                get = getattr(lib, f"{prefix}_get_num_threads{suffix}", None)
                put = getattr(lib, f"{prefix}_set_num_threads{suffix}", None)
                if get is not None and put is not None:
                    get.restype, put.argtypes = ctypes.c_int, [ctypes.c_int]
                    found = (get, put)
                    break
            if found:
                break
        if found:
            break
    _FOUND.append(found)
    return found


def blas_threads():
    """Threads numpy's OpenBLAS uses now, or None when it cannot be told."""
    funcs = _functions()
    return int(funcs[0]()) if funcs else None


@contextmanager
def one_blas_thread():
    """Hold numpy's OpenBLAS to one thread inside the block; the previous count comes back after."""
    funcs = _functions()
    if funcs is None:
        yield
        return
    get, put = funcs
    before = int(get())
    put(1)
    try:
        yield
    finally:
        put(before)


_functions()  # the library is looked up once, when the add-on loads (≈8 ms), not inside the first bake
