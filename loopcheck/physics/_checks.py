"""Argument checks shared by the physics modules: each raises ValueError naming the argument."""

from __future__ import annotations

import numpy as np


def as_finite(name: str, value) -> np.ndarray:
    """Return ``value`` as a float array; raise ValueError naming ``name`` if any entry is NaN/inf."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number or an array of numbers, got {value!r}") from None
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite (no NaN or infinity), got {value!r}")
    return arr


def as_positive(name: str, value) -> np.ndarray:
    """Return ``value`` as a float array; raise ValueError naming ``name`` unless all > 0."""
    arr = as_finite(name, value)
    if np.any(arr <= 0.0):
        raise ValueError(f"{name} must be positive, got {value!r}")
    return arr


def as_nonnegative(name: str, value) -> np.ndarray:
    """Return ``value`` as a float array; raise ValueError naming ``name`` unless all >= 0."""
    arr = as_finite(name, value)
    if np.any(arr < 0.0):
        raise ValueError(f"{name} must not be negative, got {value!r}")
    return arr


def scalar_or_array(result: np.ndarray):
    """Give a Python float back for 0-d results, the array otherwise."""
    result = np.asarray(result)
    return float(result) if result.ndim == 0 else result
