"""Run output: HDF5 snapshots (h5py) and a plain-text run log.

A snapshot holds everything needed to read, plot or restart a state without
the case file: the solution, the solution points, the whole mesh (geometry
nodes and connectivity), the free-stream reference values and the case text.
It is written to ``<name>.tmp`` and renamed with :func:`os.replace`, so a
crash never leaves a half-written file under the final name.

Layout (format ``quadfr-snapshot``, version 1)::

    /                       attrs: format, format_version, time, step, degree, points,
                            correction, n_elements, created (ISO 8601), and the free-stream
                            reference values (gamma, mach, angle_rad, rho, u, v, p, E, c, T,
                            prandtl, viscosity, [reynolds, mu], ...)
    /solution               (ne, n, n, 4) float64   U[e, i, j, v], v = rho, rho u, rho v, rho E
    /solution_points        (n,) float64            1D solution points on [-1, 1]
    /case                   string                  the case file text
    /mesh                   attrs: name, q      the layout of the native mesh file (meshing/meshfile.py):
    /mesh/geom              (ne, q+1, q+1, 2) float64
    /mesh/corners           (ne, 4) int64
    /mesh/vertices          (nv, 2) float64
    /mesh/interior_faces    (nif, 4) int64          eL, fL, eR, fR
    /mesh/boundary/<tag>    (nb, 2) int64           e, f   (one dataset per boundary tag)
    /mesh/periodic/<k>      (2,) float64            translation (dx, dy); attrs tag_a, tag_b (k = 0, 1, ...)
    /extra/...              optional: attrs (scalars) and datasets (arrays) given by the caller
"""
from __future__ import annotations

import datetime as _dt
import os
import platform
import re
import socket
import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

__all__ = [
    "FORMAT",
    "FORMAT_VERSION",
    "Snapshot",
    "SnapshotError",
    "write_snapshot",
    "read_snapshot",
    "snapshot_name",
    "list_snapshots",
    "latest_snapshot",
    "RunLog",
]

FORMAT = "quadfr-snapshot"
FORMAT_VERSION = 1
_CORE_ATTRS = ("format", "format_version", "time", "step", "degree", "points", "correction", "n_elements",
               "created")
_SNAPSHOT_RE = re.compile(r"^state-(\d{8,})\.h5$")


class SnapshotError(ValueError):
    """A snapshot file is missing parts, truncated or not a quadfr snapshot; names the file."""


@dataclass
class Snapshot:
    """A state read back from a snapshot file.

    Attributes
    ----------
    path : Path
    U : (ne, n, n, 4) array
    time : float
    step : int
    degree : int
    points : str
    correction : str or float
    nodes : (n,) array
        Solution points on [-1, 1].
    mesh : meshing.mesh.Mesh
    case_text : str
    attrs : dict
        Every root attribute (including the free-stream reference values).
    extra : dict
        The caller's extra values.
    """

    path: Path
    U: np.ndarray
    time: float
    step: int
    degree: int
    points: str
    correction: object
    nodes: np.ndarray
    mesh: object
    case_text: str
    attrs: dict = field(default_factory=dict)
    extra: dict = field(default_factory=dict)

    @property
    def gamma(self) -> float:
        return float(self.attrs["gamma"])

    @property
    def mach(self) -> float:
        return float(self.attrs["mach"])


def snapshot_name(step: int) -> str:
    """File name of the snapshot of time step ``step``: ``state-00000042.h5``."""
    return f"state-{int(step):08d}.h5"


def list_snapshots(run_dir) -> list[Path]:
    """Snapshots in ``run_dir`` in step order (temporary ``.tmp`` files are ignored)."""
    d = Path(run_dir)
    if not d.is_dir():
        raise FileNotFoundError(f"run folder '{d}' not found")
    found = [(int(m.group(1)), p) for p in d.iterdir() if (m := _SNAPSHOT_RE.match(p.name)) and p.is_file()]
    return [p for _, p in sorted(found)]


def latest_snapshot(run_dir) -> Path | None:
    """The snapshot of the highest step in ``run_dir``, or None if there is none."""
    snaps = list_snapshots(run_dir)
    return snaps[-1] if snaps else None


def _solution_nodes(points: str, n: int) -> np.ndarray:
    from .basis import solution_points

    return np.asarray(solution_points(n - 1, points)[0], dtype=float)


def _reference(case_text: str) -> dict:
    from .case import reference_from_text

    return reference_from_text(case_text, name="case text")


def _check_tag(tag: str) -> None:
    if not isinstance(tag, str) or not tag or "/" in tag or tag == ".":
        raise ValueError(f"boundary tag {tag!r} cannot be stored in a snapshot (empty, '.', or contains '/')")


def write_snapshot(path, *, U, time, step, degree, points, correction, mesh, case_text, extra=None,
                   reference=None, nodes=None) -> Path:
    """Write one state atomically.

    Parameters
    ----------
    path : str or Path
        Final file name (see :func:`snapshot_name`).
    U : (ne, n, n, 4) array
        Conserved variables at the solution points, n = degree + 1.
    time : float
    step : int
    degree : int
    points : str
        Solution point set name.
    correction : str or float
        Correction function name or VCJH parameter.
    mesh : meshing.mesh.Mesh
    case_text : str
        The case file text (stored verbatim).
    extra : dict, optional
        Additional values: scalars and strings become attributes of ``/extra``,
        arrays become datasets there.
    reference : dict, optional
        Free-stream values stored as root attributes; by default derived from
        ``case_text`` ([gas] and [flow]).
    nodes : (n,) array, optional
        Solution points; by default ``solver.basis.solution_points(degree, points)``.

    Returns
    -------
    Path of the written file.

    Notes
    -----
    The data go to ``path + ".tmp"``, which is flushed, synced and then
    renamed over ``path`` (``os.replace`` is atomic on POSIX), so readers see
    either the old file or the complete new one.
    """
    import h5py

    path = Path(path)
    U = np.asarray(U, dtype=np.float64)
    n = int(degree) + 1
    ne = mesh.n_elements
    if U.shape != (ne, n, n, 4):
        raise ValueError(f"{path}: solution must have shape ({ne}, {n}, {n}, 4) for {ne} elements and degree "
                         f"{degree}, got {U.shape}")
    nodes = _solution_nodes(points, n) if nodes is None else np.asarray(nodes, dtype=float)
    if nodes.shape != (n,):
        raise ValueError(f"{path}: solution points must have shape ({n},), got {nodes.shape}")
    ref = _reference(case_text) if reference is None else dict(reference)
    clash = [k for k in ref if k in _CORE_ATTRS]
    if clash:
        raise ValueError(f"{path}: reference keys {clash} clash with snapshot attributes")
    for tag in mesh.boundary_faces:
        _check_tag(tag)

    tmp = path.with_name(path.name + ".tmp")
    try:
        with h5py.File(tmp, "w") as f:
            _write_body(f, U=U, time=time, step=step, degree=degree, points=points, correction=correction,
                        nodes=nodes, mesh=mesh, case_text=case_text, reference=ref, extra=extra or {})
        with open(tmp, "rb+") as fh:
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return path


def _write_body(f, *, U, time, step, degree, points, correction, nodes, mesh, case_text, reference, extra):
    """Fill an open h5py file with one snapshot (layout in the module docstring)."""
    import h5py

    a = f.attrs
    a["format"] = FORMAT
    a["format_version"] = FORMAT_VERSION
    a["time"] = float(time)
    a["step"] = int(step)
    a["degree"] = int(degree)
    a["points"] = str(points)
    a["correction"] = correction if isinstance(correction, str) else float(correction)
    a["n_elements"] = int(mesh.n_elements)
    a["created"] = _dt.datetime.now().astimezone().isoformat(timespec="seconds")
    for k, v in reference.items():
        if v is None:
            continue  # e.g. reynolds of an inviscid case: absent means "not given"
        a[k] = v
    f.create_dataset("solution", data=U)
    f.create_dataset("solution_points", data=nodes)
    f.create_dataset("case", data=str(case_text), dtype=h5py.string_dtype())
    m = f.create_group("mesh")
    m.attrs["name"] = str(mesh.name)
    m.attrs["q"] = int(mesh.q)
    m.create_dataset("geom", data=np.asarray(mesh.geom, dtype=np.float64))
    m.create_dataset("corners", data=np.asarray(mesh.corners, dtype=np.int64))
    m.create_dataset("vertices", data=np.asarray(mesh.vertices, dtype=np.float64))
    m.create_dataset("interior_faces", data=np.asarray(mesh.interior_faces, dtype=np.int64).reshape(-1, 4))
    b = m.create_group("boundary")
    for tag, faces in mesh.boundary_faces.items():
        b.create_dataset(tag, data=np.asarray(faces, dtype=np.int64).reshape(-1, 2))
    per = m.create_group("periodic")
    for k, (ta, tb, vec) in enumerate(mesh.periodic):
        d = per.create_dataset(str(k), data=np.asarray(vec, dtype=np.float64).reshape(2))
        d.attrs["tag_a"] = str(ta)
        d.attrs["tag_b"] = str(tb)
    g = f.create_group("extra")
    for k, v in extra.items():
        if isinstance(v, np.ndarray) or isinstance(v, (list, tuple)):
            g.create_dataset(k, data=np.asarray(v))
        else:
            g.attrs[k] = v


def _plain(v):
    """HDF5 attribute value -> plain Python value."""
    if isinstance(v, bytes):
        return v.decode()
    if isinstance(v, np.generic):
        return v.item()
    return v


def read_snapshot(path) -> Snapshot:
    """Read a snapshot written by :func:`write_snapshot`.

    Raises
    ------
    FileNotFoundError
        No such file.
    SnapshotError
        Truncated or not HDF5, not a quadfr snapshot, an unknown format
        version, or a missing part; the message names the file.
    """
    import h5py

    from meshing.mesh import Mesh

    path = Path(path)
    if not path.is_file():
        raise FileNotFoundError(f"snapshot '{path}' not found")
    try:
        f = h5py.File(path, "r")
    except OSError as exc:
        raise SnapshotError(f"{path}: not a readable HDF5 file (truncated, unfinished or not HDF5): {exc}") from None
    with f:
        attrs = {k: _plain(v) for k, v in f.attrs.items()}
        fmt = attrs.get("format")
        if fmt != FORMAT:
            raise SnapshotError(f"{path}: not a quadfr snapshot (format attribute {fmt!r}, expected '{FORMAT}')")
        ver = attrs.get("format_version")
        if not isinstance(ver, int) or ver > FORMAT_VERSION:
            raise SnapshotError(f"{path}: snapshot format version {ver!r} is newer than this reader "
                                f"({FORMAT_VERSION})")

        def get(name):
            try:
                return f[name][()]
            except KeyError:
                raise SnapshotError(f"{path}: incomplete snapshot, '{name}' is missing") from None

        for k in _CORE_ATTRS:
            if k not in attrs:
                raise SnapshotError(f"{path}: incomplete snapshot, root attribute '{k}' is missing")
        U = get("solution")
        nodes = get("solution_points")
        case_text = _plain(get("case"))
        if "mesh/boundary" not in f:
            raise SnapshotError(f"{path}: incomplete snapshot, 'mesh/boundary' is missing")
        boundary = {str(t): np.asarray(d[()], dtype=np.int64) for t, d in f["mesh/boundary"].items()}
        if "mesh/periodic" not in f:
            raise SnapshotError(f"{path}: incomplete snapshot, 'mesh/periodic' is missing")
        per = f["mesh/periodic"]
        periodic = []
        for k in range(len(per)):
            d = per[str(k)]
            v = d[()]
            periodic.append((_plain(d.attrs["tag_a"]), _plain(d.attrs["tag_b"]), (float(v[0]), float(v[1]))))
        mesh = Mesh(geom=get("mesh/geom"), corners=get("mesh/corners"), vertices=get("mesh/vertices"),
                    interior_faces=get("mesh/interior_faces"), boundary_faces=dict(sorted(boundary.items())),
                    periodic=periodic, name=_plain(f["mesh"].attrs.get("name", "mesh")))
        extra = {}
        if "extra" in f:
            extra.update({k: _plain(v) for k, v in f["extra"].attrs.items()})
            extra.update({k: d[()] for k, d in f["extra"].items()})
    n = attrs["degree"] + 1
    if U.shape != (mesh.n_elements, n, n, 4):
        raise SnapshotError(f"{path}: solution shape {U.shape} does not match {mesh.n_elements} elements of "
                            f"degree {attrs['degree']}")
    return Snapshot(path=path, U=U, time=float(attrs["time"]), step=int(attrs["step"]), degree=int(attrs["degree"]),
                    points=str(attrs["points"]), correction=attrs["correction"], nodes=np.asarray(nodes),
                    mesh=mesh, case_text=case_text, attrs=attrs, extra=extra)


class RunLog:
    """Append-only plain-text log of a run.

    Every call opens the file in append mode, writes whole lines and closes
    it, so the log survives a crash up to the last line and several sessions
    (a run and its resumptions) follow each other in one file.

    Parameters
    ----------
    path : str or Path
        Log file; its folder must exist.
    """

    def __init__(self, path):
        self.path = Path(path)

    @staticmethod
    def _now() -> str:
        return _dt.datetime.now().astimezone().isoformat(timespec="seconds")

    def write(self, *lines: str) -> None:
        """Append lines verbatim."""
        with open(self.path, "a", encoding="utf-8") as fh:
            for line in lines:
                fh.write(line.rstrip("\n") + "\n")

    def line(self, message: str) -> None:
        """Append one time-stamped line."""
        self.write(f"{self._now()}  {message}")

    def start(self, case_path=None, resume_from=None, **facts) -> None:
        """Header of a session: time, case file, host facts, and any ``facts`` given."""
        lines = [f"=== run started {self._now()}"]
        if case_path is not None:
            lines.append(f"case: {case_path}")
        if resume_from is not None:
            lines.append(f"resumed from: {resume_from}")
        for k, v in host_facts().items():
            lines.append(f"{k}: {v}")
        for k, v in facts.items():
            lines.append(f"{k}: {v}")
        self.write(*lines)

    def progress(self, step: int, time: float, **values) -> None:
        """One progress line: step, time and named values (``dt=..., residual=...``)."""
        parts = [f"step {int(step):8d}", f"t {float(time):.6e}"]
        parts += [f"{k} {v:.6e}" if isinstance(v, float) else f"{k} {v}" for k, v in values.items()]
        self.line("  ".join(parts))

    def end(self, status: str = "finished", **facts) -> None:
        """Footer of a session."""
        extra = "".join(f"  {k} {v}" for k, v in facts.items())
        self.write(f"=== run {status} {self._now()}{extra}")


def host_facts() -> dict:
    """Host, platform, Python and library versions, CPU count, command line."""
    facts = {
        "host": socket.gethostname(),
        "platform": platform.platform(),
        "python": sys.version.split()[0],
        "cpus": os.cpu_count(),
        "command": " ".join(sys.argv),
    }
    for mod in ("numpy", "numba", "h5py"):
        m = sys.modules.get(mod)
        if m is None:
            try:
                m = __import__(mod)
            except ImportError:
                continue
        facts[mod] = getattr(m, "__version__", "?")
    return facts
