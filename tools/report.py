"""``quadfr report RUN_DIR [--from T]``: force statistics, Strouhal number and plots of a run.

Reads ``history.h5`` of a run folder (layout in :mod:`solver.history`) and

* chooses a window of whole lift cycles after ``--from T`` (default: the
  start of the trailing cycles whose amplitude and period stay within 1 % of
  the last cycle's, :func:`tools.signals.settled_start`); a run whose lift
  fluctuation stays below ``STEADY_RMS`` is treated as steady and the window is
  its last quarter;
* gives mean, rms of the fluctuation and half peak-to-peak amplitude of every
  force coefficient on that window (:func:`tools.signals.window_stats`);
* gives the Strouhal number ``St = f L / U_inf`` from the lift, by the
  windowed spectral peak and by the zero-crossing periods (both printed),
  and the cycle-to-cycle variation of period and amplitude;
* summarises the residuals and the wall time;
* writes ``report.md`` and, when matplotlib is installed, ``forces.png``,
  ``spectrum.png`` and ``field.png`` (vorticity of the newest snapshot) into
  the run folder.
"""
from __future__ import annotations

import math
import os
from pathlib import Path

import numpy as np

from . import signals

__all__ = ["analyse", "summarize", "summary_lines", "write_report", "main", "STEADY_RMS", "PLOT_NOTE"]

#: below this rms of the lift fluctuation a run counts as steady
STEADY_RMS = 1e-3
#: the automatic window: trailing cycles within this fraction of the last cycle's amplitude and period
SETTLED_TOL = 0.01
PLOT_NOTE = "plots skipped: matplotlib is not installed (pip install -e \".[plot]\")"
_COEFF_ORDER = ("cd", "cl", "cm", "cd_pressure", "cd_viscous", "cl_pressure", "cl_viscous", "cm_pressure",
                "cm_viscous", "cx", "cy", "cx_pressure", "cx_viscous", "cy_pressure", "cy_viscous")


def analyse(run_dir, t_from: float | None = None, group: str = "total") -> dict:
    """Statistics of a run's force history.

    Parameters
    ----------
    run_dir : str or Path
        Run folder holding ``history.h5``.
    t_from : float, optional
        Start of the analysis window; default chosen as described in the
        module docstring.
    group : str
        Force group (``total`` or a wall tag).

    Returns
    -------
    dict
        ``window`` (t0, t1, cycles), ``steady`` (bool), ``coefficients``
        (name -> window stats), ``strouhal`` (spectral, crossings, frequency
        values; None when steady), ``periodicity``, ``residual``, ``wall``,
        ``reference_length``, ``history`` (the raw columns).
    """
    from solver.history import read_history

    h = read_history(run_dir)
    d = h["data"]
    prefix = f"forces/{group}/"
    names = [c[len(prefix):] for c in h["columns"] if c.startswith(prefix)]
    if not names:
        groups = sorted({c.split("/")[1] for c in h["columns"] if c.startswith("forces/")})
        raise ValueError(f"{h['path']}: no force history for group '{group}'"
                         + (f"; groups: {', '.join(groups)}" if groups else " (the case monitors no walls)"))
    t = np.asarray(d["time"], dtype=float)
    # a restarted run may repeat no rows, but guard against equal times (e.g. a zero-length last step)
    keep = np.concatenate([[True], np.diff(t) > 0])
    t = t[keep]
    col = {n: np.asarray(d[prefix + n], dtype=float)[keep] for n in names}
    if t.size < 8:
        raise ValueError(f"{h['path']}: only {t.size} history rows; run longer before reporting")
    L = float(h["attrs"].get("reference_length", 1.0))
    cl = col["cl"]
    tail = t >= t[0] + 0.75 * (t[-1] - t[0])
    lift_rms_tail = float(np.std(cl[tail]))
    out = {"reference_length": L, "group": group, "t_range": (float(t[0]), float(t[-1])), "names": names}
    user_from = t_from is not None
    steady = lift_rms_tail < STEADY_RMS
    window = None
    tc_all = None
    if not steady:
        tc_all = signals.crossing_times(t, cl)
        if t_from is None:
            t_from = signals.settled_start(t, cl, tol=SETTLED_TOL, tc=tc_all)
            if t_from is None:
                t_from = float(t[0] + 0.5 * (t[-1] - t[0]))
        window = signals.whole_cycle_window(t, cl, t_from, tc=tc_all)
        if window is None:
            steady = not user_from and lift_rms_tail < 10 * STEADY_RMS
    if window is None:
        t0 = float(t_from) if user_from else float(t[0] + 0.75 * (t[-1] - t[0]))
        if t0 >= t[-1]:
            raise ValueError(f"--from {t0:g} is not before the end of the history (t = {t[-1]:g})")
        window = (t0, float(t[-1]), 0)
    t0, t1, ncyc = window
    out["window"] = window
    out["window_from"] = t_from
    out["user_from"] = bool(user_from)
    out["steady"] = bool(steady and ncyc == 0)
    out["coefficients"] = {n: signals.window_stats(t, col[n], t0, t1) for n in _ordered(names)}
    sel = (t >= t0) & (t <= t1)
    out["strouhal"] = None
    out["periodicity"] = None
    if ncyc >= 2 and np.count_nonzero(sel) >= 16:
        sp = signals.spectral_peak(t[sel], cl[sel])
        tc = tc_all[(tc_all >= t0) & (tc_all <= t1)]
        fz = (tc.size - 1) / (tc[-1] - tc[0]) if tc.size >= 2 else math.nan
        cs = signals.cycle_stats(t, cl, tc=tc)
        out["strouhal"] = {"spectral": sp["frequency"] * L, "crossings": fz * L, "frequency": sp["frequency"],
                           "frequency_crossings": fz, "resolution": sp["resolution"] * L,
                           "freqs": sp["freqs"], "power": sp["power"], "cycles": int(max(tc.size - 1, 0))}
        out["periodicity"] = signals.periodicity(cs)
    elif out["steady"]:
        cd = col["cd"]
        w = (t >= t0)
        out["drift"] = float((cd[w][-1] - cd[w][0]) / max(abs(np.mean(cd[w])), 1e-300))
    res_cols = [c for c in h["columns"] if c.startswith("residual/")]
    res = {c.split("/", 1)[1]: np.asarray(d[c], dtype=float)[keep] for c in res_cols}
    out["residual"] = {k: {"first": float(v[0]), "max": float(np.max(v)), "last": float(v[-1]),
                           "orders_below_max": float(math.log10(np.max(v) / v[-1])) if v[-1] > 0 else math.inf}
                       for k, v in res.items()}
    wall = np.asarray(d["wall_time"], dtype=float)[keep]
    steps = np.asarray(d["step"])[keep]
    span = float(t[-1] - t[0])
    out["wall"] = {"seconds": float(wall[-1]), "steps": int(steps[-1]), "sim_time": span,
                   "seconds_per_time_unit": float(wall[-1] / span) if span > 0 else math.nan,
                   "mean_dt": span / max(int(steps[-1] - steps[0]), 1)}
    out["history"] = {"time": t, **col}
    out["history_path"] = str(h["path"])
    return out


def summarize(run_dir, t_from: float | None = None, group: str = "total") -> dict:
    """Scalar outputs of :func:`analyse` (for resolution studies and scripts).

    Returns
    -------
    dict of float
        ``mean_<c>``, ``<c>_rms`` and ``<c>_amplitude`` of every coefficient
        ``c`` (``cd``, ``cl``, ``cm``, ``cd_pressure``, ...) over the window;
        with shedding also ``St`` (spectral peak), ``St_crossings``,
        ``period_variation``, ``amplitude_variation`` and ``cycles``;
        ``window_start``, ``window_end``.
    """
    res = analyse(run_dir, t_from=t_from, group=group)
    out = {"window_start": float(res["window"][0]), "window_end": float(res["window"][1])}
    for k, v in res["coefficients"].items():
        out[f"mean_{k}"] = v["mean"]
        out[f"{k}_rms"] = v["rms"]
        out[f"{k}_amplitude"] = v["amplitude"]
    st = res["strouhal"]
    if st is not None:
        out.update(St=st["spectral"], St_crossings=st["crossings"], cycles=float(st["cycles"]),
                   period_variation=res["periodicity"]["period_variation"],
                   amplitude_variation=res["periodicity"]["amplitude_variation"])
    return out


def _ordered(names):
    known = [n for n in _COEFF_ORDER if n in names]
    return known + [n for n in names if n not in known]


def summary_lines(res: dict) -> list[str]:
    """Terminal and Markdown text of :func:`analyse`'s result."""
    t0, t1, n = res["window"]
    lines = []
    lines.append(f"history: {res['history_path']} (t = {res['t_range'][0]:g} .. {res['t_range'][1]:g}); "
                 f"forces of group '{res['group']}', reference length {res['reference_length']:g}")
    if res["steady"]:
        lines.append(f"no lift oscillation (lift rms below {STEADY_RMS:g} in the last quarter), treated as steady: "
                     f"window t = {t0:.6g} .. {t1:.6g}; relative drag change over it "
                     f"{res.get('drift', float('nan')):+.2e}")
    else:
        how = "given by --from" if res.get("user_from") else "chosen: lift cycles settled"
        lines.append(f"window: {n} whole lift cycles, t = {t0:.6g} .. {t1:.6g} (start {how}: {res.get('window_from')})")
    lines.append("")
    lines.append("| coefficient | mean | rms (fluct.) | amplitude (half p-p) | min | max |")
    lines.append("|---|---|---|---|---|---|")
    for k, s in res["coefficients"].items():
        lines.append(f"| {k} | {s['mean']:.5f} | {s['rms']:.5f} | {s['amplitude']:.5f} | {s['min']:.5f} | "
                     f"{s['max']:.5f} |")
    lines.append("")
    st = res["strouhal"]
    if st is not None:
        d = (st["crossings"] / st["spectral"] - 1.0) * 100 if st["spectral"] else math.nan
        lines.append(f"Strouhal number St = f L / U_inf from the lift: spectral peak {st['spectral']:.5f} "
                     f"(Hann window, bin width {st['resolution']:.4f}, refined), zero crossings "
                     f"{st['crossings']:.5f} over {st['cycles']} cycles (difference {d:+.3f} %)")
        p = res["periodicity"]
        verdict = "periodic" if p["period_variation"] < 0.01 and p["amplitude_variation"] < 0.01 else \
            "NOT periodic yet (variation above 1 %)"
        lines.append(f"periodicity over {p['cycles']} cycles: period varies by {100 * p['period_variation']:.3f} %, "
                     f"lift amplitude by {100 * p['amplitude_variation']:.3f} % (trend "
                     f"{100 * p['amplitude_trend']:+.3f} % per cycle): {verdict}")
    elif not res["steady"]:
        lines.append("Strouhal number: fewer than two whole lift cycles in the window")
    lines.append("")
    lines.append("residual (rms of dU/dt): " + "; ".join(
        f"{k} {v['last']:.3e} ({v['orders_below_max']:.1f} orders below its maximum)" for k, v in res["residual"].items()))
    w = res["wall"]
    lines.append(f"wall time {w['seconds']:.1f} s for {w['steps']} steps and {w['sim_time']:.6g} time units "
                 f"({w['seconds_per_time_unit']:.2f} s per time unit, mean dt {w['mean_dt']:.3e})")
    return lines


# ---------------------------------------------------------------------------
# plots
# ---------------------------------------------------------------------------
def _pyplot():
    try:
        import matplotlib
    except ImportError:
        return None
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    plt.rcParams.update({"font.size": 9, "axes.grid": True, "grid.color": "0.85", "axes.edgecolor": "0.3",
                         "axes.spines.top": False, "axes.spines.right": False, "lines.linewidth": 1.0,
                         "savefig.dpi": 130})
    return plt


def _save(fig, path: Path) -> Path:
    tmp = path.with_name(path.stem + ".tmp" + path.suffix)
    try:
        fig.savefig(tmp)
        os.replace(tmp, path)
    finally:
        tmp.unlink(missing_ok=True)
    return path


def plot_forces(res: dict, path: Path, plt) -> Path:
    h = res["history"]
    t0, t1, _ = res["window"]
    fig, axes = plt.subplots(2, 1, figsize=(7.0, 4.6), sharex=True)
    # the impulsive start gives a drag spike tens of times the mean: scale the axes to the later signal
    tt = h["time"]
    vis = tt >= max(tt[0] + 0.05 * (tt[-1] - tt[0]), t0 - 0.5 * (t1 - t0))
    for ax, k, c in ((axes[0], "cd", "0.15"), (axes[1], "cl", "tab:blue")):
        ax.plot(tt, h[k], color=c)
        ax.axvspan(t0, t1, color="0.9", zorder=0)
        lo, hi = float(np.min(h[k][vis])), float(np.max(h[k][vis]))
        pad = 0.15 * max(hi - lo, 1e-3 * max(abs(hi), abs(lo), 1e-12))
        ax.set_ylim(lo - pad, hi + pad)
        ax.set_ylabel({"cd": "drag coefficient", "cl": "lift coefficient"}[k])
    axes[1].set_xlabel("time (L / U_inf)")
    axes[0].set_title("force history (shaded: analysis window)", loc="left")
    fig.tight_layout()
    out = _save(fig, path)
    plt.close(fig)
    return out


def plot_spectrum(res: dict, path: Path, plt) -> Path | None:
    st = res["strouhal"]
    if st is None:
        return None
    L = res["reference_length"]
    fig, ax = plt.subplots(figsize=(6.0, 3.4))
    f = st["freqs"] * L
    pw = st["power"] / st["power"].max()
    ax.semilogy(f, np.maximum(pw, 1e-12), color="tab:blue")
    ax.axvline(st["spectral"], color="0.3", ls="--", lw=0.8)
    ax.set_xlim(0, min(f[-1], 6 * st["spectral"]))
    ax.set_ylim(1e-8, 2)
    ax.set_xlabel("Strouhal number f L / U_inf")
    ax.set_ylabel("lift power (normalised)")
    ax.set_title(f"lift spectrum, Hann window: St = {st['spectral']:.4f}", loc="left")
    fig.tight_layout()
    out = _save(fig, path)
    plt.close(fig)
    return out


def plot_field(run_dir: Path, path: Path, plt, field: str = "vorticity") -> Path | None:
    """Picture of a field of the newest snapshot around the monitored walls."""
    import matplotlib.tri as mtri

    from solver.output import latest_snapshot, read_snapshot
    from tools.vtu import sample_fields

    last = latest_snapshot(run_dir)
    if last is None:
        return None
    snap = read_snapshot(last)
    xy, fields = sample_fields(snap)
    val = fields[field]
    ne, m = xy.shape[0], xy.shape[1]
    idx = np.arange(ne * m * m).reshape(ne, m, m)
    a, b, c, d = idx[:, :-1, :-1], idx[:, 1:, :-1], idx[:, 1:, 1:], idx[:, :-1, 1:]
    tris = np.concatenate([np.stack([a, b, c], -1).reshape(-1, 3), np.stack([a, c, d], -1).reshape(-1, 3)])
    pts = xy.reshape(-1, 2)
    walls = [t for t in snap.mesh.boundary_faces if t in _wall_tags(snap)]
    if walls:
        wp = np.concatenate([snap.mesh.vertices[np.unique(snap.mesh.corners[f[:, 0]])] for f in
                             (snap.mesh.boundary_faces[t] for t in walls)])
        lo, hi = wp.min(axis=0), wp.max(axis=0)
        size = max(hi - lo)
        box = (lo[0] - 2 * size, hi[0] + 10 * size, lo[1] - 3 * size, hi[1] + 3 * size)
    else:
        lo, hi = pts.min(axis=0), pts.max(axis=0)
        box = (lo[0], hi[0], lo[1], hi[1])
    inside = (pts[:, 0] > box[0]) & (pts[:, 0] < box[1]) & (pts[:, 1] > box[2]) & (pts[:, 1] < box[3])
    v = val.reshape(-1)
    lim = float(np.nanpercentile(np.abs(v[inside]), 99)) if np.any(inside) else float(np.nanmax(np.abs(v)))
    lim = lim if lim > 0 else 1.0
    keep = inside[tris].any(axis=1)
    fig, ax = plt.subplots(figsize=(7.0, 3.0))
    tri = mtri.Triangulation(pts[:, 0], pts[:, 1], tris[keep])
    pc = ax.tripcolor(tri, np.clip(v, -lim, lim), shading="gouraud", cmap="RdBu_r", vmin=-lim, vmax=lim)
    ax.set_xlim(box[0], box[1])
    ax.set_ylim(box[2], box[3])
    ax.set_aspect("equal")
    ax.grid(False)
    fig.colorbar(pc, ax=ax, shrink=0.8, label=field)
    ax.set_title(f"{field} at t = {snap.time:.5g} ({last.name})", loc="left")
    fig.tight_layout()
    out = _save(fig, path)
    plt.close(fig)
    return out


def _wall_tags(snap) -> list[str]:
    import tomllib

    from solver.forces import WALL_TYPES

    try:
        b = tomllib.loads(snap.case_text).get("boundaries", {})
    except tomllib.TOMLDecodeError:
        return []
    out = []
    for tag, v in b.items():
        name = v if isinstance(v, str) else (v.get("type") if isinstance(v, dict) else None)
        if name in WALL_TYPES:
            out.append(tag)
    return out


def write_report(run_dir, res: dict, plots: bool = True, printer=print) -> dict:
    """Write ``report.md`` (and the PNG plots) into the run folder; returns the paths written."""
    run_dir = Path(run_dir)
    written = {}
    note = None
    if plots:
        plt = _pyplot()
        if plt is None:
            note = PLOT_NOTE
        else:
            written["forces"] = plot_forces(res, run_dir / "forces.png", plt)
            sp = plot_spectrum(res, run_dir / "spectrum.png", plt)
            if sp is not None:
                written["spectrum"] = sp
            fp = plot_field(run_dir, run_dir / "field.png", plt)
            if fp is not None:
                written["field"] = fp
    lines = [f"# Run report: {run_dir.name}", ""] + summary_lines(res) + [""]
    if note:
        lines += [f"_{note}_", ""]
    for k, p in written.items():
        lines.append(f"![{k}]({Path(p).name})")
    lines += ["", "2D laminar results are prototypes for planning simulations, not design values."]
    md = run_dir / "report.md"
    tmp = md.with_name(md.name + ".tmp")
    tmp.write_text("\n".join(lines) + "\n", encoding="utf-8")
    os.replace(tmp, md)
    written["markdown"] = md
    if note:
        printer(note)
    return written


def main(args) -> int:
    """``quadfr report``: print the summary, write report.md and the plots."""
    run_dir = Path(args.run_dir)
    if not run_dir.is_dir():
        raise FileNotFoundError(f"run folder '{run_dir}' not found")
    res = analyse(run_dir, t_from=args.t_from, group=args.group)
    for line in summary_lines(res):
        print(line)
    written = write_report(run_dir, res, plots=not args.no_plots)
    for k, p in written.items():
        print(f"wrote {p}")
    return 0
