"""Helpers shared by the compiled (numba) kernels: growing a buffer inside a kernel, and running a
kernel's own code as plain Python.

Small inputs run the very same kernels as plain Python: numba's first call in a process costs about
half a second (setting up its compiler target), far more than a kernel takes in Python on a few
thousand items. A twin is the kernel's own code (``py_func``) with every compiled helper it calls
swapped for its plain-Python original, so the two engines cannot drift apart.
"""

from __future__ import annotations

import types
from collections.abc import Callable
from typing import Any

import numpy as np
from numba import njit

__all__ = ["grow", "python_twin"]


@njit(cache=True, nogil=True)
def grow(buffer: np.ndarray, needed: int) -> np.ndarray:  # pragma: no cover - compiled
    """``buffer`` itself when it holds ``needed`` items, else a copy doubled until it does."""
    size = buffer.shape[0]
    while size < needed:
        size *= 2
    if size == buffer.shape[0]:
        return buffer
    bigger = np.empty(size, dtype=buffer.dtype)
    bigger[: buffer.shape[0]] = buffer
    return bigger


def python_twin(kernel: Any, *helpers: Any) -> Callable[..., Any]:
    """``kernel`` as plain Python, calling the plain versions of ``helpers`` (the compiled functions
    it calls, by their names in its module)."""
    module_globals = dict(kernel.py_func.__globals__)
    # Helpers are rebuilt over the same swapped globals, so a helper calling another helper stays plain.
    for h in helpers:
        module_globals[h.py_func.__name__] = types.FunctionType(h.py_func.__code__, module_globals, h.py_func.__name__)
    plain = types.FunctionType(kernel.py_func.__code__, module_globals, kernel.py_func.__name__)

    def twin(*args: Any) -> Any:
        with np.errstate(over="ignore"):  # 64-bit hashes wrap around, as they do when compiled
            return plain(*args)

    return twin
