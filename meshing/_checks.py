"""Validation of generator parameters; every error names the parameter."""
from __future__ import annotations

import math

__all__ = ["check_int", "check_number", "check_positive", "check_nonneg", "check_degree", "check_range"]


def check_int(name: str, value, lo: int, hi: int | None = None) -> int:
    """``value`` as an int in ``[lo, hi]`` or a ValueError naming ``name``."""
    if isinstance(value, bool) or not isinstance(value, (int,)) and not (
            isinstance(value, float) and value.is_integer()):
        raise ValueError(f"parameter '{name}' must be an integer, got {value!r}")
    v = int(value)
    if v < lo or (hi is not None and v > hi):
        rng = f">= {lo}" if hi is None else f"in {lo}..{hi}"
        raise ValueError(f"parameter '{name}' must be {rng}, got {v}")
    return v


def check_number(name: str, value) -> float:
    """``value`` as a finite float or a ValueError naming ``name``."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"parameter '{name}' must be a number, got {value!r}") from None
    if not math.isfinite(v):
        raise ValueError(f"parameter '{name}' must be finite, got {value!r}")
    return v


def check_positive(name: str, value) -> float:
    v = check_number(name, value)
    if v <= 0.0:
        raise ValueError(f"parameter '{name}' must be > 0, got {v:g}")
    return v


def check_nonneg(name: str, value) -> float:
    v = check_number(name, value)
    if v < 0.0:
        raise ValueError(f"parameter '{name}' must be >= 0, got {v:g}")
    return v


def check_range(name: str, value, lo: float, hi: float) -> float:
    v = check_number(name, value)
    if not lo <= v <= hi:
        raise ValueError(f"parameter '{name}' must be in [{lo:g}, {hi:g}], got {v:g}")
    return v


def check_degree(q) -> int:
    """Geometry degree: 1..4 are the degrees every generator is tested at."""
    return check_int("q", q, 1, 4)
