"""Small checks shared by stages that take two paired 1-D arrays."""

from __future__ import annotations

import numpy as np

from ftsource.errors import AnalysisError

__all__ = ["finite_pair"]


def finite_pair(a, b, name_a: str, name_b: str) -> tuple[np.ndarray, np.ndarray]:
    """``a`` and ``b`` as float arrays, checked to be 1-D, of one length and finite.

    Raises
    ------
    AnalysisError
        Naming both arrays, their shapes, or that a value is not finite.
    """
    x = np.asarray(a, dtype=float)
    y = np.asarray(b, dtype=float)
    if x.ndim != 1 or y.shape != x.shape:
        raise AnalysisError(
            f"{name_a} and {name_b} must be 1-D arrays of one length, got shapes {x.shape} "
            f"and {y.shape}"
        )
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(y))):
        raise AnalysisError(f"{name_a} and {name_b} must be finite")
    return x, y
