"""Time to answer: wall time from ``quadfr solve`` of the Re = 100 cylinder to a Strouhal number within 2 %.

Usage::

    python -m tools.time_to_answer [--case cases/cylinder-re100.toml] [--tolerance 0.02] [--warm]
                                   [--limit-minutes 60] [--json FILE]

Starts ``quadfr solve CASE`` as a subprocess with an empty numba cache (so
the JIT compilation is part of the figure; ``--warm`` keeps the normal
cache) in a temporary copy of the case's run folder, and watches the history
CSV.  Every few seconds it analyses the lift of the samples so far: the
answer counts as reached when

* the trailing lift cycles are settled (:func:`tools.signals.settled_start`:
  at least 3 cycles whose amplitude and period stay within 2 % of the last
  cycle's), and
* the Strouhal number of the windowed spectral peak over those cycles is
  within the tolerance of Williamson's (1988) value 0.1643 (Re = 100).

The wall time is taken from the start of the subprocess to the moment the
watcher sees this (an upper bound: the solver flushes its history every 5 s
and the watcher looks every 5 s; the solver's own ``wall_time`` of the
deciding row is reported too), then the solver gets SIGINT (it writes a
checkpoint and exits).  Nothing is asserted: the
figure is printed (and written with ``--json``).
"""
from __future__ import annotations

import argparse
import math
import os
import signal
import subprocess
import sys
import tempfile
import time
import tomllib
from pathlib import Path

import numpy as np

from tools.jsonio import write_json

ROOT = Path(__file__).resolve().parents[1]
ST_REF = -3.3265 / 100.0 + 0.1816 + 1.600e-4 * 100.0


def _read_csv(path: Path):
    """Columns of a history CSV written by a running solver (a torn last line is skipped)."""
    try:
        lines = path.read_text(encoding="utf-8").splitlines()
    except FileNotFoundError:
        return None
    if len(lines) < 2:
        return None
    head = lines[0].split(",")
    rows = []
    for line in lines[1:]:
        parts = line.split(",")
        if len(parts) != len(head):
            continue
        try:
            rows.append([float(x) for x in parts])
        except ValueError:
            continue
    if not rows:
        return None
    a = np.array(rows)
    return {h: a[:, j] for j, h in enumerate(head)}


def check_answer(d: dict, st_ref: float, tol: float, length: float = 1.0):
    """``(reached, st, t_sample, wall_sample)`` from the history columns so far."""
    from tools import signals

    t, cl, wall = d["time"], d["forces/total/cl"], d["wall_time"]
    ok = np.concatenate([[True], np.diff(t) > 0])
    t, cl, wall = t[ok], cl[ok], wall[ok]
    if t.size < 64 or np.std(cl[t > t[-1] / 2]) < 1e-3:
        return False, math.nan, math.nan, math.nan
    t0 = signals.settled_start(t, cl, tol=0.02, min_cycles=3)
    if t0 is None:
        return False, math.nan, math.nan, math.nan
    w = signals.whole_cycle_window(t, cl, t0)
    if w is None or w[2] < 3:
        return False, math.nan, math.nan, math.nan
    sel = (t >= w[0]) & (t <= w[1])
    st = signals.spectral_peak(t[sel], cl[sel])["frequency"] * length
    i = int(np.searchsorted(t, w[1]))
    i = min(i, t.size - 1)
    return abs(st / st_ref - 1.0) <= tol, st, float(t[i]), float(wall[i])


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(prog="python -m tools.time_to_answer", description=__doc__.split("\n\n")[0])
    ap.add_argument("--case", default=str(ROOT / "cases" / "cylinder-re100.toml"))
    ap.add_argument("--tolerance", type=float, default=0.02)
    ap.add_argument("--warm", action="store_true", help="keep the numba cache (JIT not included)")
    ap.add_argument("--limit-minutes", type=float, default=60.0)
    ap.add_argument("--json", metavar="FILE")
    args = ap.parse_args(argv)

    case_path = Path(args.case).resolve()
    data = tomllib.loads(case_path.read_text(encoding="utf-8"))
    length = float(data.get("monitor", {}).get("length", data.get("flow", {}).get("length", 1.0)))
    with tempfile.TemporaryDirectory(prefix="quadfr-tta-") as tmp:
        tmp = Path(tmp)
        from tools.verify.cylinder import dump_toml

        data.setdefault("output", {})["directory"] = str(tmp / "run")
        case = tmp / case_path.name
        case.write_text(dump_toml(data), encoding="utf-8")
        env = dict(os.environ)
        if not args.warm:
            env["NUMBA_CACHE_DIR"] = str(tmp / "numba-cache")
        t_start = time.perf_counter()
        proc = subprocess.Popen([sys.executable, "-m", "tools.cli", "solve", str(case)], cwd=str(ROOT), env=env,
                                stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        csv = tmp / "run" / "history.csv"
        result = {"reached": False}
        try:
            while proc.poll() is None and time.perf_counter() - t_start < 60 * args.limit_minutes:
                time.sleep(5.0)
                d = _read_csv(csv)
                if d is None:
                    continue
                reached, st, ts, ws = check_answer(d, ST_REF, args.tolerance, length)
                print(f"  wall {time.perf_counter() - t_start:7.1f} s  t = {d['time'][-1]:8.3f}  "
                      f"St = {st:.4f}" if math.isfinite(st) else
                      f"  wall {time.perf_counter() - t_start:7.1f} s  t = {d['time'][-1]:8.3f}  (not settled)",
                      flush=True)
                if reached:
                    result = {"reached": True, "st": st, "st_reference": ST_REF, "sim_time": ts,
                              "wall_seconds": time.perf_counter() - t_start, "solver_wall_at_sample": ws,
                              "error": st / ST_REF - 1.0}
                    break
        finally:
            if proc.poll() is None:
                proc.send_signal(signal.SIGINT)
                try:
                    proc.wait(timeout=120)
                except subprocess.TimeoutExpired:
                    proc.kill()
        result.update(case=str(case_path), tolerance=args.tolerance, warm_cache=bool(args.warm),
                      cpus=os.cpu_count(), total_watch_seconds=time.perf_counter() - t_start)
    if result["reached"]:
        print(f"time to answer: {result['wall_seconds']:.0f} s ({result['wall_seconds'] / 60:.1f} min) wall, "
              f"JIT {'not ' if args.warm else ''}included: St = {result['st']:.4f} vs {ST_REF:.4f} "
              f"({100 * result['error']:+.2f} %) at t = {result['sim_time']:.1f}")
    else:
        print(f"no answer within {args.limit_minutes:g} minutes (or the solver stopped)")
    if args.json:
        write_json(args.json, result)
    return 0 if result["reached"] else 1


if __name__ == "__main__":
    sys.exit(main())
