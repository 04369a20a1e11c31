"""Time histories of a run: an HDF5 file with resizable, chunked columns and a CSV copy.

Layout of ``history.h5`` (format ``quadfr-history``, version 1)::

    /                 attrs: format, format_version, columns (names in order), and the
                      facts of the monitors (reference length, moment point, wall tags,
                      dynamic pressure, probe points, ...)
    /<column>         (N,) one dataset per column, chunked, resizable along the row axis:
                      step (int64), time, wall_time, dt, forces/<group>/<coefficient>,
                      residual/<variable>, bounds/<name>, probes/<k>/<variable> (float64)

Column names are HDF5 paths; ``history.csv`` has one header line with the same
names and one line per sample.  Floats are written with 17 significant digits,
so the CSV is a lossless copy of the HDF5 data.

Rows are buffered and written in blocks (:meth:`HistoryFile.flush`); the run
flushes before every snapshot, so after a crash both files hold at least every
row up to the newest snapshot.  On resume, rows after the snapshot step are
dropped (:meth:`HistoryFile.truncate`) before new rows are appended, so there
are no duplicates.
"""
from __future__ import annotations

import os
from pathlib import Path

import numpy as np

__all__ = ["HISTORY_FORMAT", "HistoryFile", "read_history", "HistoryError"]

HISTORY_FORMAT = "quadfr-history"
HISTORY_VERSION = 1
_CHUNK = 1024


class HistoryError(ValueError):
    """A history file is unreadable or does not fit the run; names the file."""


def _fmt(v, integer: bool) -> str:
    if integer:
        return str(int(v))
    return repr(float(v)) if np.isfinite(v) else ("nan" if np.isnan(v) else ("inf" if v > 0 else "-inf"))


class HistoryFile:
    """Append-only history of one run (HDF5 + CSV).

    Parameters
    ----------
    run_dir : str or Path
    columns : list of str
        Column names (HDF5 paths); the first must be ``step``.
    attrs : dict
        Root attributes (scalars, strings, small arrays).
    name : str
        Base name of the two files (``history`` -> ``history.h5``, ``history.csv``).
    """

    def __init__(self, run_dir, columns, attrs=None, name: str = "history"):
        self.dir = Path(run_dir)
        self.columns = list(columns)
        if not self.columns or self.columns[0] != "step":
            raise ValueError("the first history column must be 'step'")
        if len(set(self.columns)) != len(self.columns):
            raise ValueError("history column names must be unique")
        self.attrs = dict(attrs or {})
        self.h5 = self.dir / f"{name}.h5"
        self.csv = self.dir / f"{name}.csv"
        self._rows: list[np.ndarray] = []

    # ------------------------------------------------------------------ create / resume
    def create(self) -> None:
        """Start new, empty files (replacing old ones atomically)."""
        import h5py

        tmp = self.h5.with_name(self.h5.name + ".tmp")
        try:
            with h5py.File(tmp, "w") as f:
                f.attrs["format"] = HISTORY_FORMAT
                f.attrs["format_version"] = HISTORY_VERSION
                f.attrs["columns"] = np.array(self.columns, dtype=h5py.string_dtype())
                _set_attrs(f, self.attrs)
                for c in self.columns:
                    f.create_dataset(c, shape=(0,), maxshape=(None,), chunks=(_CHUNK,),
                                     dtype=np.int64 if c == "step" else np.float64)
            os.replace(tmp, self.h5)
        except BaseException:
            tmp.unlink(missing_ok=True)
            raise
        tmpc = self.csv.with_name(self.csv.name + ".tmp")
        tmpc.write_text(",".join(self.columns) + "\n", encoding="utf-8")
        os.replace(tmpc, self.csv)
        self._rows = []

    def truncate(self, step: int) -> int:
        """Keep the rows with ``step <= step`` in both files (resume); returns the rows kept.

        A missing history starts new files.  A history written with other
        columns is an error: the monitors of the case were changed.
        """
        import h5py

        self._rows = []
        if not self.h5.is_file():
            self.create()
            return 0
        try:
            f = h5py.File(self.h5, "r+")
        except OSError as exc:
            raise HistoryError(f"{self.h5}: not a readable history file ({exc}); move it away to start a new "
                               "history") from None
        with f:
            cols = [c.decode() if isinstance(c, bytes) else str(c) for c in f.attrs.get("columns", [])]
            if cols != self.columns:
                raise HistoryError(f"{self.h5}: written with other columns than this case records (were the "
                                   f"[monitor] settings changed?); it has {len(cols)} columns, the case "
                                   f"{len(self.columns)}")
            steps = f["step"][()]
            keep = int(np.searchsorted(steps, int(step), side="right"))
            if keep != steps.size:
                for c in self.columns:
                    f[c].resize((keep,))
            _set_attrs(f, self.attrs)
        # the CSV copy: keep the header and the first `keep` rows whose step is <= step
        lines = self.csv.read_text(encoding="utf-8").splitlines() if self.csv.is_file() else []
        body = []
        for line in lines[1:]:
            head = line.split(",", 1)[0]
            try:
                s = int(head)
            except ValueError:
                break  # a torn last line after a crash
            if s > step:
                break
            body.append(line)
        body = body[:keep]
        if len(body) != keep:  # the CSV lost rows the HDF5 file has: rebuild it from the HDF5 data
            body = self._csv_lines(self._read_rows(keep))
        tmpc = self.csv.with_name(self.csv.name + ".tmp")
        tmpc.write_text("\n".join([",".join(self.columns), *body]) + "\n", encoding="utf-8")
        os.replace(tmpc, self.csv)
        return keep

    def _read_rows(self, n: int) -> np.ndarray:
        import h5py

        with h5py.File(self.h5, "r") as f:
            return np.stack([f[c][:n].astype(float) for c in self.columns], axis=1) if n else \
                np.zeros((0, len(self.columns)))

    # ------------------------------------------------------------------ append
    def append(self, row) -> None:
        """Buffer one row (sequence of floats in column order)."""
        r = np.asarray(row, dtype=float)
        if r.shape != (len(self.columns),):
            raise ValueError(f"history row has {r.size} values, expected {len(self.columns)}")
        self._rows.append(r)

    @property
    def pending(self) -> int:
        return len(self._rows)

    def _csv_lines(self, rows) -> list[str]:
        return [",".join(_fmt(v, j == 0) for j, v in enumerate(r)) for r in rows]

    def flush(self) -> None:
        """Write the buffered rows to both files."""
        if not self._rows:
            return
        import h5py

        block = np.stack(self._rows)
        with h5py.File(self.h5, "r+") as f:
            n0 = f["step"].shape[0]
            n1 = n0 + block.shape[0]
            for j, c in enumerate(self.columns):
                d = f[c]
                d.resize((n1,))
                d[n0:n1] = block[:, j].astype(np.int64) if c == "step" else block[:, j]
        with open(self.csv, "a", encoding="utf-8") as fh:
            fh.write("\n".join(self._csv_lines(block)) + "\n")
            fh.flush()
        self._rows = []


def _set_attrs(f, attrs: dict) -> None:
    """Root attributes; lists or arrays of strings become HDF5 variable-length strings."""
    import h5py

    for k, v in attrs.items():
        if isinstance(v, (list, tuple)) and all(isinstance(x, str) for x in v):
            v = np.array(list(v), dtype=h5py.string_dtype())
        elif isinstance(v, np.ndarray) and v.dtype.kind in "US":
            v = v.astype(object).astype(h5py.string_dtype())
        f.attrs[k] = v


def read_history(path) -> dict:
    """Read a history file.

    Parameters
    ----------
    path : str or Path
        ``history.h5`` or the run folder holding it.

    Returns
    -------
    dict
        ``columns`` (list), ``data`` (name -> (N,) array), ``attrs`` (dict).
    """
    import h5py

    p = Path(path)
    if p.is_dir():
        p = p / "history.h5"
    if not p.is_file():
        raise FileNotFoundError(f"history file '{p}' not found")
    try:
        f = h5py.File(p, "r")
    except OSError as exc:
        raise HistoryError(f"{p}: not a readable HDF5 file: {exc}") from None
    with f:
        if f.attrs.get("format") != HISTORY_FORMAT:
            raise HistoryError(f"{p}: not a quadfr history (format {f.attrs.get('format')!r})")
        cols = [c.decode() if isinstance(c, bytes) else str(c) for c in f.attrs["columns"]]
        data = {c: f[c][()] for c in cols}
        attrs = {}
        for k, v in f.attrs.items():
            if isinstance(v, bytes):
                v = v.decode()
            elif isinstance(v, np.ndarray) and v.dtype.kind in "OS":
                v = [x.decode() if isinstance(x, bytes) else str(x) for x in v]
            elif isinstance(v, np.generic):
                v = v.item()
            attrs[k] = v
    return {"columns": cols, "data": data, "attrs": attrs, "path": p}
