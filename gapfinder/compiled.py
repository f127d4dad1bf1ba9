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

__all__ = ["FIBONACCI", "grow", "python_twin"]

# Fibonacci hashing (common practice; Knuth, TAOCP vol. 3, 6.4, cited from memory): the top bits of
# key * 2**64 / golden ratio spread keys over a power-of-two table.
FIBONACCI = np.uint64(0x9E3779B97F4A7C15)


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
    it calls, directly or through one another, from its module or others, under any name)."""
    namespaces: dict[str, dict[str, Any]] = {}  # a copy of each module's globals, by module

    def plain_of(compiled: Any) -> types.FunctionType:
        function = compiled.py_func
        namespace = namespaces.setdefault(function.__module__, dict(function.__globals__))
        return types.FunctionType(
            function.__code__, namespace, function.__name__, function.__defaults__, function.__closure__
        )

    plain_by_id = {id(h): plain_of(h) for h in helpers}
    plain = plain_of(kernel)
    # a helper is found by identity, so one made by a factory (a closure) or imported under another name is swapped too
    for namespace in namespaces.values():
        for name, value in list(namespace.items()):
            if id(value) in plain_by_id:
                namespace[name] = plain_by_id[id(value)]

    def twin(*args: Any) -> Any:
        with np.errstate(over="ignore"):  # 64-bit hashes wrap around, as they do when compiled
            return plain(*args)

    return twin
