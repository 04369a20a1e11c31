"""``quadfr verify cylinder-dual``: the Re = 100 cylinder by dual time stepping against the explicit run.

The test a user makes before trusting a physical step on the cluster: does
the shedding frequency survive it?

1. An explicit run of ``cylinder-re100.toml`` (SSP-RK(5,4), the reference)
   develops the shedding to ``develop`` and continues to ``end``; it writes a
   snapshot at ``develop``.
2. Dual-time runs (BDF2, p-multigrid pseudo-time iteration, the settings of
   ``cylinder-re100-dual.toml``) start from that snapshot (``[initial] kind =
   "snapshot"``) and run to ``end`` with each physical step ``dt`` of the list.
3. Every run is analysed over the same window ``develop + settle .. end``
   (tools.report.analyse), the Strouhal number taken from the mean period of
   the whole lift cycles between zero crossings (over a window of a few
   cycles the spectral peak is biased by its bin width; it is printed too).
   Passed when the dual-time run at the nominal step
   gives the explicit run's Strouhal number within 1 % and Williamson's (1988,
   Phys. Fluids 31) fit ``St = -3.3265/Re + 0.1816 + 1.600e-4 Re`` = 0.1643
   within 2 % (quick form: the quick tolerance of ``verify cylinder``, the
   coarse mesh's own error), and when p-multigrid needs at least 2x fewer
   fine-level residual evaluations than the plain pseudo-time iteration over
   the same steps.  The largest step of the list that keeps St within 1 % is
   reported.

The wall-time table compares explicit and dual time with p-multigrid over the
window (wall seconds per simulated time unit, from the histories), and dual
time without multigrid against with it over the first ``plain_steps`` steps
from the snapshot (a plain run over the whole window would cost more than all
the others together).
"""
from __future__ import annotations

import math
import time
from pathlib import Path

import numpy as np

from .cylinder import CASES, QUICK as CYL_QUICK, ST_WILLIAMSON, case_variant, work_folder

__all__ = ["verify_cylinder_dual", "tabulate", "QUICK", "FULL"]

_QUICK_MESH = CYL_QUICK["re100"]["overrides"]["mesh"]

#: full form: the bundled mesh; dt list; plain (no multigrid) comparison at ``plain_dt`` over ``plain_steps``
FULL = {"mesh": {}, "degree": 2, "develop": 60.0, "end": 84.0, "settle": 4.0,
        "dts": (0.02, 0.1, 0.2, 0.4), "nominal": 0.02, "plain_dt": 0.1, "plain_steps": 50,
        "tol_explicit": 0.01, "tol_williamson": 0.02, "mg_factor": 2.0}
#: quick form: the coarse mesh of ``verify cylinder --quick``, one step size
QUICK = {"mesh": dict(_QUICK_MESH), "degree": 2, "develop": 40.0, "end": 60.0, "settle": 2.0,
         "dts": (0.1,), "nominal": 0.1, "plain_dt": 0.1, "plain_steps": 4,
         "tol_explicit": 0.01, "tol_williamson": CYL_QUICK["tol"]["st100"], "mg_factor": 2.0}


def _window_stats(run_dir, t_from) -> dict:
    from solver.history import read_history
    from tools.report import analyse

    res = analyse(run_dir, t_from=t_from)
    st = res["strouhal"]
    h = read_history(run_dir)
    d = h["data"]
    tt = np.asarray(d["time"])
    sel = tt >= t_from - 1e-9
    # the zero-crossing St (mean period of the whole lift cycles) is the measure: over the few cycles of a
    # short window the spectral peak is biased by its bin width (1 / window length); both are reported
    out = {"st": st["crossings"] if st else math.nan, "st_spectral": st["spectral"] if st else math.nan,
           "cd": res["coefficients"]["cd"]["mean"], "cl_amplitude": res["coefficients"]["cl"]["amplitude"],
           "window": res["window"],
           "wall_window": float(d["wall_time"][sel][-1] - d["wall_time"][sel][0]),
           "time_window": float(tt[sel][-1] - tt[sel][0]),
           "steps": int(d["step"][-1]), "wall_total": float(d["wall_time"][-1])}
    if "inner/iterations" in d:
        it = np.asarray(d["inner/iterations"])
        ok = np.isfinite(it)
        out.update(iterations=float(np.mean(it[ok])), fine_rhs=float(np.mean(np.asarray(d["inner/rhs"])[ok])),
                   coarse_rhs=float(np.mean(np.asarray(d["inner/coarse_rhs"])[ok])),
                   unconverged=int(np.sum(np.asarray(d["inner/converged"])[ok] < 0.5)))
    return out


def _first_steps(run_dir, n) -> dict:
    """Totals of the first ``n`` dual-time steps of a run (history every step): RHS counts, wall, time."""
    from solver.history import read_history

    d = read_history(run_dir)["data"]
    it = np.asarray(d["inner/iterations"])
    if np.count_nonzero(np.isfinite(it)) < n:
        raise RuntimeError(f"{run_dir}: history holds {np.count_nonzero(np.isfinite(it))} dual-time steps, "
                           f"fewer than {n}")
    sl = slice(1, n + 1)  # row 0: the initial state
    return {"steps": n, "iterations": float(np.mean(it[sl])), "fine_rhs": float(np.mean(d["inner/rhs"][sl])),
            "coarse_rhs": float(np.mean(d["inner/coarse_rhs"][sl])),
            "wall": float(d["wall_time"][n] - d["wall_time"][0]), "time": float(d["time"][n] - d["time"][0])}


def _snapshot_at(run_dir, t) -> Path:
    from solver.output import list_snapshots, read_snapshot

    best = None
    for p in list_snapshots(run_dir):
        ts = read_snapshot(p).time
        if best is None or abs(ts - t) < best[0]:
            best = (abs(ts - t), p, ts)
    if best is None or best[0] > 1e-6 * max(1.0, t):
        raise RuntimeError(f"{run_dir}: no snapshot at t = {t:g} (nearest {best[2] if best else 'none'})")
    return best[1]


def _run_all(cfg, folder: Path, printer) -> None:
    """The explicit reference, the dual-time runs and the plain (no multigrid) run, into ``folder``."""
    from solver.run import run_case

    quiet = (lambda *a, **k: None)
    exp_case = case_variant(CASES / "cylinder-re100.toml", folder,
                            {"mesh": cfg["mesh"], "scheme": {"degree": cfg["degree"]}, "time": {"end": cfg["end"]},
                             "output": {"snapshot_every": cfg["develop"], "history_every": 5}}, "explicit")
    t0 = time.perf_counter()
    r = run_case(exp_case, printer=quiet)
    printer(f"  mesh: {r['dof']} DoF, degree {cfg['degree']}; explicit run 0 .. {cfg['end']:g}: {r['step']} steps, "
            f"wall {time.perf_counter() - t0:.1f} s (JIT included)")
    snap = _snapshot_at(r["run_dir"], cfg["develop"])

    def dual(dt, multigrid, name, stop_after=None):
        over = {"mesh": cfg["mesh"], "scheme": {"degree": cfg["degree"]},
                "time": {"dt": dt, "end": cfg["end"], "progress_every": 10 ** 9},
                "pseudo": {"multigrid": multigrid, "max_iterations": 3000 if not multigrid else 1000},
                "initial": {"kind": "snapshot", "file": str(snap)},
                "output": {"snapshot_every": 0.0, "history_every": 1}}
        case = case_variant(CASES / "cylinder-re100-dual.toml", folder, over, name)
        t1 = time.perf_counter()
        run_case(case, printer=quiet, stop_after=stop_after)
        return time.perf_counter() - t1

    for dt in cfg["dts"]:
        wall = dual(dt, True, f"dual-{dt:g}")
        printer(f"  bdf2 dt {dt:g} with p-multigrid: wall {wall:.1f} s")
    # the plain pseudo-time iteration (no multigrid), against the multigrid run over the same first steps
    wall = dual(cfg["plain_dt"], False, f"plain-{cfg['plain_dt']:g}", stop_after=cfg["plain_steps"])
    printer(f"  bdf2 dt {cfg['plain_dt']:g} without multigrid, {cfg['plain_steps']} steps: wall {wall:.1f} s")


def tabulate(cfg, folder, printer=print) -> dict:
    """Table, checks and PASS/FAIL from the run folders that :func:`_run_all` wrote into ``folder``."""
    folder = Path(folder)
    t_from = cfg["develop"] + cfg["settle"]
    ex = _window_stats(folder / "explicit", t_from)
    ex.update(method="explicit ssp-rk54", dt=math.nan)
    rows = [ex]
    for dt in cfg["dts"]:
        row = _window_stats(folder / f"dual-{dt:g}", t_from)
        row.update(method="bdf2 p-multigrid", dt=dt)
        rows.append(row)
    pdt, nst = cfg["plain_dt"], cfg["plain_steps"]
    plain = _first_steps(folder / f"plain-{pdt:g}", nst)
    with_mg = _first_steps(folder / f"dual-{pdt:g}", nst)
    factor = plain["fine_rhs"] / with_mg["fine_rhs"]
    basis = f"fine-level RHS over the first {nst} steps from the snapshot, dt {pdt:g}"

    st_exp = ex["st"]
    for x in rows:
        x["err_explicit"] = abs(x["st"] / st_exp - 1.0) if math.isfinite(x["st"]) else math.inf
        x["err_williamson"] = abs(x["st"] / ST_WILLIAMSON - 1.0) if math.isfinite(x["st"]) else math.inf
        x["wall_per_time"] = x["wall_window"] / max(x["time_window"], 1e-300)
    w0, w1, ncyc = ex["window"]
    printer(f"  window: {ncyc} whole lift cycles, t = {w0:.2f} .. {w1:.2f} (after t = {t_from:g}); St from the "
            "zero crossings (spectral peak in 'St spec.')")
    printer(f"  {'method':<18} {'dt':>5} {'cycles':>6} {'fine RHS':>8} {'coarse':>6} {'wall/t':>7} {'St':>8} "
            f"{'vs expl':>7} {'vs Wil.':>7} {'St spec.':>8} {'Cd':>7} {'Cl amp':>7}")
    for x in rows:
        dts = "-" if not math.isfinite(x["dt"]) else f"{x['dt']:g}"
        cyc = f"{x['iterations']:.1f}" if "iterations" in x else "-"
        fr = f"{x['fine_rhs']:.0f}" if "fine_rhs" in x else "-"
        cr = f"{x['coarse_rhs']:.0f}" if "coarse_rhs" in x else "-"
        printer(f"  {x['method']:<18} {dts:>5} {cyc:>6} {fr:>8} {cr:>6} {x['wall_per_time']:6.2f}s {x['st']:8.5f} "
                f"{100 * x['err_explicit']:6.2f}% {100 * x['err_williamson']:6.2f}% {x['st_spectral']:8.5f} "
                f"{x['cd']:7.4f} {x['cl_amplitude']:7.4f}")
    printer("  (cycles and RHS per physical step; wall/t: wall seconds per simulated time unit over the window)")
    printer(f"  first {nst} steps from the snapshot at dt {pdt:g}: without multigrid {plain['iterations']:.1f} "
            f"iterations, {plain['fine_rhs']:.0f} fine RHS per step, {plain['wall'] / plain['time']:.2f} s per time "
            f"unit; with p-multigrid {with_mg['iterations']:.1f} cycles, {with_mg['fine_rhs']:.0f} fine + "
            f"{with_mg['coarse_rhs']:.0f} coarse RHS per step, {with_mg['wall'] / with_mg['time']:.2f} s per time unit")
    nominal = next(x for x in rows[1:] if x["dt"] == cfg["nominal"])
    ok_exp = nominal["err_explicit"] <= cfg["tol_explicit"]
    ok_wil = nominal["err_williamson"] <= cfg["tol_williamson"]
    ok_conv = all(x.get("unconverged", 0) == 0 for x in rows[1:])
    ok_mg = factor >= cfg["mg_factor"]
    within = [x["dt"] for x in rows[1:] if x["err_explicit"] <= cfg["tol_explicit"]]
    largest = max(within) if within else math.nan
    printer(f"  dt {cfg['nominal']:g}: St vs explicit {100 * nominal['err_explicit']:.2f} % (tolerance "
            f"{100 * cfg['tol_explicit']:.0f} %) {'PASS' if ok_exp else 'FAIL'}; vs Williamson "
            f"{100 * nominal['err_williamson']:.2f} % (tolerance {100 * cfg['tol_williamson']:.0f} %) "
            f"{'PASS' if ok_wil else 'FAIL'}")
    printer(f"  p-multigrid: {factor:.2f}x fewer fine-level residual evaluations ({basis}; required "
            f">= {cfg['mg_factor']:g}x) {'PASS' if ok_mg else 'FAIL'}")
    printer(f"  every inner iteration converged: {'PASS' if ok_conv else 'FAIL'}")
    printer(f"  largest dt of {list(cfg['dts'])} keeping St within {100 * cfg['tol_explicit']:.0f} % of the "
            f"explicit run: {largest:g}")
    passed = ok_exp and ok_wil and ok_mg and ok_conv
    printer(f"cylinder-dual: {'PASS' if passed else 'FAIL'}")
    return {"check": "cylinder-dual", "passed": bool(passed), "rows": rows, "multigrid_factor": factor,
            "multigrid_basis": basis, "plain_first_steps": plain, "multigrid_first_steps": with_mg,
            "largest_dt_within": largest, "st_explicit": st_exp, "st_williamson": ST_WILLIAMSON,
            "window": [t_from, cfg["end"]]}


def verify_cylinder_dual(quick: bool = False, printer=print, keep: str | None = None) -> dict:
    """Run the explicit reference and the dual-time runs; returns the table and PASS/FAIL.

    Parameters
    ----------
    quick : bool
        Coarse mesh, one physical step, short window (CI).
    keep : str, optional
        Folder for the run folders (default: a temporary folder, removed afterwards);
        :func:`tabulate` reads them again.
    """
    cfg = QUICK if quick else FULL
    printer("Re = 100 cylinder: dual time stepping (BDF2 + p-multigrid) against the explicit run"
            + (" -- quick form" if quick else ""))
    printer(f"  reference: the explicit SSP-RK(5,4) run on the same mesh and degree; Williamson 1988 St = "
            f"{ST_WILLIAMSON:.4f}")
    with work_folder(keep, "quadfr-verify-cylinder-dual-") as folder:
        _run_all(cfg, folder, printer)
        out = tabulate(cfg, folder, printer)
    out["quick"] = bool(quick)
    return out
