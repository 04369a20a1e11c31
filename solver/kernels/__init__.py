"""Numba kernels: private, arrays and scalars only, no orchestration.

Modules here are compared in tests with plain-numpy implementations of the same
maths (tests/reference_fr.py).

Numba's on-disk cache (``cache=True``) is keyed on the file that defines each
compiled function, so a kernel that inlines a device function from another
module (``ghost_state`` from bcstate.py, ``interface_flux`` from riemann.py)
would keep stale machine code after that other module changes.  On import we
therefore hash the sources of this whole package and drop the package's cache
files when the hash differs from the one recorded beside them.
"""
from __future__ import annotations

import hashlib
import os
from pathlib import Path


def _cache_dirs(here: Path) -> list[Path]:
    dirs = [here / "__pycache__"]
    env = os.environ.get("NUMBA_CACHE_DIR")
    if env:
        # numba mirrors the package path below NUMBA_CACHE_DIR
        dirs += [p for p in Path(env).rglob("*") if p.is_dir() and p.name == here.name]
    return dirs


def _invalidate_stale_cache() -> None:
    here = Path(__file__).resolve().parent
    h = hashlib.sha256()
    for src in sorted(here.glob("*.py")):
        h.update(src.name.encode())
        h.update(src.read_bytes())
    digest = h.hexdigest()
    for d in _cache_dirs(here):
        stamp = d / "quadfr-kernels.sha256"
        try:
            if stamp.is_file() and stamp.read_text().strip() == digest:
                continue
            if d.is_dir():
                for f in list(d.glob("*.nbi")) + list(d.glob("*.nbc")):
                    f.unlink(missing_ok=True)
            d.mkdir(parents=True, exist_ok=True)
            stamp.write_text(digest)
        except OSError:
            # a read-only install keeps whatever cache it has; numba then compiles in memory if needed
            pass


_invalidate_stale_cache()
