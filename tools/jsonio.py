"""JSON output of the tools: one atomic writer for every ``--json`` file.

Every check, benchmark and estimate that writes its results as JSON goes
through :func:`write_json`, so that

* a reader never sees a half-written file (temp file in the same folder,
  then ``os.replace``, which is atomic on one file system);
* the file is strict JSON: ``inf`` and ``nan`` (a diverged run, an order
  that has no previous level) are written as ``null``, which every JSON
  reader accepts, instead of the non-standard ``Infinity``/``NaN`` tokens;
* numpy arrays and scalars and :class:`pathlib.Path` values need no
  conversion by the caller.
"""
from __future__ import annotations

import json
import math
import os
from pathlib import Path

import numpy as np

__all__ = ["finite", "write_json"]


def finite(o):
    """Copy of ``o`` ready for strict JSON.

    Parameters
    ----------
    o : object
        Nested dicts, lists and tuples of JSON-able values, numpy arrays
        (any shape) and numpy scalars.

    Returns
    -------
    object
        The same structure with tuples and arrays as (nested) lists, numpy
        scalars as Python scalars and non-finite floats as ``None``.  Other
        values are returned as they are.
    """
    if isinstance(o, dict):
        return {k: finite(v) for k, v in o.items()}
    if isinstance(o, (list, tuple)):
        return [finite(v) for v in o]
    if isinstance(o, (np.ndarray, np.generic)):  # -> nested lists / a Python scalar
        return finite(o.tolist())
    if isinstance(o, float) and not math.isfinite(o):
        return None
    return o


def _default(o):
    if isinstance(o, Path):
        return str(o)
    raise TypeError(f"not JSON serialisable: {type(o).__name__}")


def write_json(path, data) -> None:
    """Write ``data`` to ``path`` as indented JSON, atomically.

    Parameters
    ----------
    path : str or pathlib.Path
        Target file; its folder must exist.  A ``<name>.tmp`` file next to
        it is written first and renamed over it, and removed if anything
        fails, so ``path`` holds either the old or the complete new file.
    data : object
        Anything :func:`finite` accepts, plus :class:`pathlib.Path` values.

    Raises
    ------
    TypeError
        For a value JSON cannot hold (the message names its type).
    """
    path = Path(path)
    tmp = path.with_name(path.name + ".tmp")
    try:
        with open(tmp, "w", encoding="utf-8") as fh:
            # allow_nan=False: finite() has replaced every inf/nan, so one left over is a bug, not output
            json.dump(finite(data), fh, indent=2, default=_default, allow_nan=False)
            fh.write("\n")
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
