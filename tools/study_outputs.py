"""What a resolution study measures on each finished level: named output functions.

:data:`STUDY_OUTPUTS` is a :class:`solver.registry.Registry`; each entry's
``obj`` is an :class:`OutputProvider` whose function takes a finished run
folder and returns ``{output name: float}``.  ``quadfr study --outputs NAME``
picks one; ``auto`` takes ``vortex-error`` for a fully periodic vortex case
and ``report`` otherwise.

* ``report``: :func:`tools.report.summarize` (force statistics, Strouhal
  number, ...), imported when first used so a study of other outputs does not
  depend on it.
* ``vortex-error``: the L2 and maximum density error of the last snapshot
  against the exact advected isentropic vortex (Shu 1998; Yee, Sandham &
  Djomehri 1999), the same measure as ``quadfr verify vortex``.  The exact
  value of these outputs is 0, so the study reports them as errors.
"""
from __future__ import annotations

import importlib
import math
import tomllib
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from solver.registry import Registry

__all__ = ["OutputProvider", "STUDY_OUTPUTS", "vortex_error", "report_summary", "choose_outputs"]


@dataclass(frozen=True)
class OutputProvider:
    """A study output function and what is known about its outputs.

    Attributes
    ----------
    fn : callable ``fn(run_dir, t_from=None) -> dict[str, float]``
    exact : dict
        Output name -> exact value, for outputs that are errors against an
        exact solution (the study then compares against it, not against an
        extrapolation).
    judged : tuple of str or None
        Outputs the verdict ("cheapest level with every output within
        tolerance") and the Markdown sections cover; the others are kept in
        the CSV and JSON files.  None: all.  A ``--tolerance`` given for an
        output adds it.
    judged_if_nonzero : dict
        Output name -> magnitude: judged too when ``|reference|`` reaches it
        (a mean lift or moment that is not just noise about zero).
    """

    fn: Callable
    exact: dict = field(default_factory=dict)
    judged: tuple | None = None
    judged_if_nonzero: dict = field(default_factory=dict)


def report_summary(run_dir, t_from=None) -> dict:
    """Outputs of :func:`tools.report.summarize` (imported lazily).

    Raises
    ------
    RuntimeError
        tools.report (or its ``summarize``) is not available.
    """
    try:
        mod = importlib.import_module("tools.report")
    except ImportError as exc:
        raise RuntimeError(f"study outputs 'report' need tools.report.summarize, which cannot be imported: {exc}"
                           ) from None
    fn = getattr(mod, "summarize", None)
    if fn is None:
        raise RuntimeError("study outputs 'report': tools.report has no function summarize(run_dir, t_from)")
    out = fn(run_dir, t_from=t_from)
    return {str(k): float(v) for k, v in dict(out).items() if _is_number(v)}


def _is_number(v) -> bool:
    return isinstance(v, (int, float, np.floating, np.integer)) and not isinstance(v, bool)


def _periods(mesh) -> tuple[float | None, float | None]:
    """Box periods (Lx, Ly) from the mesh's periodic translations (None where not periodic)."""
    lx = ly = None
    for _, _, (dx, dy) in mesh.periodic:
        if abs(dx) > 0 and abs(dy) == 0:
            lx = abs(dx)
        elif abs(dy) > 0 and abs(dx) == 0:
            ly = abs(dy)
    return lx, ly


def vortex_error(run_dir, t_from=None) -> dict:
    """Density error of the newest snapshot of ``run_dir`` against the exact isentropic vortex.

    Parameters
    ----------
    run_dir : path
        Finished run of a case with ``[initial] kind = "vortex"``.
    t_from : ignored
        (Part of the output-function signature.)

    Returns
    -------
    dict
        ``rho_L2_error`` = ``sqrt(int (rho - rho_exact)^2 dA / int dA)`` by
        Gauss quadrature on the solution points (as ``quadfr verify vortex``),
        ``rho_max_error`` = the largest pointwise difference.

    Notes
    -----
    The exact solution is the initial vortex carried with the free-stream
    velocity to the snapshot time, the nearest periodic image taken along the
    periodic directions of the mesh (Shu 1998; Yee, Sandham & Djomehri 1999).
    """
    from solver.basis import make_basis
    from solver.case import reference_from_text
    from solver.initial import INITIAL_CONDITIONS, isentropic_vortex
    from solver.metrics import compute_metrics
    from solver.output import latest_snapshot, read_snapshot

    last = latest_snapshot(run_dir)
    if last is None:
        raise FileNotFoundError(f"run folder '{run_dir}' holds no snapshot")
    snap = read_snapshot(last)
    data = tomllib.loads(snap.case_text)
    ini = data.get("initial", {})
    if ini.get("kind") != "vortex":
        raise ValueError(f"{last}: outputs 'vortex-error' need [initial] kind = \"vortex\", the case has "
                         f"{ini.get('kind', 'uniform')!r}")
    ref = reference_from_text(snap.case_text, name=str(last))
    entry = INITIAL_CONDITIONS["vortex"]
    kw = {k: ini.get(k, entry.defaults[k]) for k in entry.params}
    basis = make_basis(snap.degree, snap.points)
    m = compute_metrics(snap.mesh, basis.x)
    lx, ly = _periods(snap.mesh)
    if lx is None or ly is None:
        raise ValueError(f"{last}: outputs 'vortex-error' need a mesh periodic in x and y")
    Ue = isentropic_vortex(m.xy, ref, kw["strength"], kw["radius"], tuple(kw["center"]), snap.time, (lx, ly))
    d = snap.U[..., 0] - Ue[..., 0]
    w = basis.w
    err2 = np.einsum("i,j,eij,eij->", w, w, m.J, d * d)
    area = np.einsum("i,j,eij->", w, w, m.J)
    return {"rho_L2_error": float(math.sqrt(err2 / area)), "rho_max_error": float(np.max(np.abs(d)))}


STUDY_OUTPUTS = Registry("study output")
#: the engineering results of a force history; window bounds, cycle counts and periodicity measures, the
#: x/y duplicates of cd/cl and the pressure/viscous parts are diagnostics, kept in the files only
REPORT_JUDGED = ("St", "mean_cd", "cl_amplitude", "cl_rms", "cd_amplitude")
STUDY_OUTPUTS.register("report", doc="force and shedding statistics of tools.report.summarize (St, mean Cd, ...)",
                       obj=OutputProvider(report_summary, judged=REPORT_JUDGED,
                                          judged_if_nonzero={"mean_cl": 0.01, "mean_cm": 0.01}))
STUDY_OUTPUTS.register("vortex-error", doc="density error against the exact isentropic vortex (exact value 0)",
                       obj=OutputProvider(vortex_error, exact={"rho_L2_error": 0.0, "rho_max_error": 0.0}))


def choose_outputs(case, name: str = "auto") -> str:
    """The output registry name for ``case``: ``name`` itself, or for ``auto`` ``vortex-error``
    when the case is a vortex in a box without boundaries, else ``report``."""
    if name != "auto":
        STUDY_OUTPUTS[name]  # unknown name: error listing the valid ones
        return name
    if case.initial.kind == "vortex" and not case.boundaries:
        return "vortex-error"
    return "report"
