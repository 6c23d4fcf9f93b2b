"""Best-effort control of the BLAS thread count for small dense blocks.

Most symmetry-tier blocks are a few hundred rows or less; for those, OpenBLAS's
threads cost more than they save (and on a shared machine their spin-waiting slows
everything down by an order of magnitude), while parallelism comes from running
blocks on several workers.  :func:`single_blas_thread` switches the OpenBLAS
libraries loaded in this process (numpy's and scipy's bundled copies, found in
/proc/self/maps) to one thread for the duration of a ``with`` block and restores the
previous count.  Where no OpenBLAS is found it does nothing.

>>> with single_blas_thread():
...     pass
"""

from __future__ import annotations

import contextlib
import ctypes
from collections.abc import Iterator
from functools import lru_cache

_NAMES = (
    ("scipy_openblas_set_num_threads64_", "scipy_openblas_get_num_threads64_"),
    ("scipy_openblas_set_num_threads", "scipy_openblas_get_num_threads"),
    ("openblas_set_num_threads64_", "openblas_get_num_threads64_"),
    ("openblas_set_num_threads", "openblas_get_num_threads"),
)


@lru_cache(maxsize=1)
def _controls() -> tuple[tuple[object, object], ...]:
    """(set, get) function pairs of every loaded OpenBLAS (empty if none or unreadable)."""
    paths = []
    try:
        with open("/proc/self/maps") as maps:
            for line in maps:
                path = line.split()[-1] if line.strip() else ""
                if "openblas" in path.lower() and ".so" in path and path not in paths:
                    paths.append(path)
    except OSError:
        return ()
    out = []
    for path in paths:
        try:
            lib = ctypes.CDLL(path)
        except OSError:
            continue
        for set_name, get_name in _NAMES:
            setter, getter = getattr(lib, set_name, None), getattr(lib, get_name, None)
            if setter is not None and getter is not None:
                setter.argtypes, setter.restype = [ctypes.c_int], None
                getter.argtypes, getter.restype = [], ctypes.c_int
                out.append((setter, getter))
                break
    return tuple(out)


@contextlib.contextmanager
def single_blas_thread() -> Iterator[None]:
    """Run the body with one OpenBLAS thread, restoring the previous counts afterwards."""
    saved = []
    for setter, getter in _controls():
        try:
            saved.append((setter, getter()))
            setter(1)
        except Exception:  # pragma: no cover - a foreign BLAS build: leave it alone
            continue
    try:
        yield
    finally:
        for setter, count in saved:
            setter(count)
