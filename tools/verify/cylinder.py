"""``quadfr verify cylinder``: laminar flow past a circular cylinder against published values.

Two runs of the bundled cases (full form) or of coarse, short versions of
them (``--quick``), through the whole pipeline: case file, driver, history,
report analysis.

* Re = 40, steady: drag coefficient 1.51 within 4 % (Dennis & Chang 1970,
  J. Fluid Mech. 42: 1.522; Fornberg 1980, J. Fluid Mech. 98: 1.498) and
  recirculation length L/D = 2.25 within 6 %, measured from the rear of the
  cylinder (same sources; from memory).
* Re = 100, periodic shedding: Strouhal number from Williamson's (1988, Phys.
  Fluids 31) fit St = -3.3265/Re + 0.1816 + 1.600e-4 Re = 0.1643 within 2 %,
  mean drag coefficient 1.34 within 5 % and lift amplitude 0.33 within 12 %
  (Park, Kwon & Choi 1998, KSME Int. J. 12; Liu, Zheng & Sung 1998, J. Comput.
  Phys. 139; from memory).  The shedding must also be periodic: period and
  amplitude vary by less than 1 % from cycle to cycle over the window.

The quick form (CI) uses a coarser mesh, degree and shorter runs, so its
tolerances are looser (printed with the table); it shows that the pipeline
delivers numbers of the right size, the full form that they are right.
"""
from __future__ import annotations

import contextlib
import math
import tempfile
import time
import tomllib
from pathlib import Path

__all__ = ["verify_cylinder", "REFERENCES", "QUICK", "FULL", "work_folder"]

ROOT = Path(__file__).resolve().parents[2]
CASES = ROOT / "cases"

ST_WILLIAMSON = -3.3265 / 100.0 + 0.1816 + 1.600e-4 * 100.0

#: quantity -> (reference value, source)
REFERENCES = {
    "cd40": (1.51, "Dennis & Chang 1970: 1.522; Fornberg 1980: 1.498"),
    "lod40": (2.25, "Dennis & Chang 1970; Fornberg 1980 (from memory)"),
    "st100": (ST_WILLIAMSON, "Williamson 1988: St = -3.3265/Re + 0.1816 + 1.600e-4 Re"),
    "cd100": (1.34, "Park, Kwon & Choi 1998; Liu, Zheng & Sung 1998 (from memory)"),
    "clamp100": (0.33, "Park, Kwon & Choi 1998; Liu, Zheng & Sung 1998 (from memory)"),
}

#: full form: the bundled cases as they are; relative tolerances
FULL = {
    "re40": {"case": "cylinder-re40.toml", "overrides": {}},
    "re100": {"case": "cylinder-re100.toml", "overrides": {}},
    "tol": {"cd40": 0.04, "lod40": 0.06, "st100": 0.02, "cd100": 0.05, "clamp100": 0.12},
    "periodic": 0.01,
}

#: quick form: coarse and short; looser tolerances
QUICK = {
    "re40": {"case": "cylinder-re40.toml",
             "overrides": {"mesh": {"n_radial": 12, "n_around": 24, "far_radius": 25.0},
                           "scheme": {"degree": 2}, "time": {"end": 30.0}}},
    "re100": {"case": "cylinder-re100.toml",
              "overrides": {"mesh": {"n_radial": 12, "n_around": 24, "far_radius": 25.0},
                            "scheme": {"degree": 2}, "time": {"end": 60.0}}},
    "tol": {"cd40": 0.10, "lod40": 0.30, "st100": 0.08, "cd100": 0.12, "clamp100": 0.35},
    "periodic": 0.05,
}


def _toml_value(v) -> str:
    from solver.case import toml_literal

    if isinstance(v, dict):
        return "{ " + ", ".join(f"{k} = {_toml_value(x)}" for k, x in v.items()) + " }"
    return toml_literal(v)


def dump_toml(data: dict) -> str:
    """TOML text of a case dictionary (top-level scalars, then one table per section)."""
    lines = [f"{k} = {_toml_value(v)}" for k, v in data.items() if not isinstance(v, dict)]
    for sec, tab in data.items():
        if isinstance(tab, dict):
            lines.append(f"\n[{sec}]")
            lines += [f"{k} = {_toml_value(v)}" for k, v in tab.items()]
    return "\n".join(lines) + "\n"


def case_variant(case_file: Path, folder: Path, overrides: dict, name: str):
    """Load a bundled case with section overrides, its run folder moved into ``folder``."""
    from solver.case import load_case

    data = tomllib.loads(case_file.read_text(encoding="utf-8"))
    for sec, vals in overrides.items():
        data.setdefault(sec, {}).update(vals)
    t = data.get("time", {})
    if "end" in overrides.get("time", {}):
        t.pop("steps", None)
    data.setdefault("output", {})["directory"] = str((folder / name).resolve())
    data["output"]["checkpoint_minutes"] = 0.0
    path = folder / f"{name}.toml"
    path.write_text(dump_toml(data), encoding="utf-8")
    return load_case(path)


@contextlib.contextmanager
def work_folder(keep: str | None, prefix: str):
    """Folder for a check's run folders: ``keep`` (created, kept), or a temporary one removed afterwards."""
    if keep is not None:
        folder = Path(keep)
        folder.mkdir(parents=True, exist_ok=True)
        yield folder
        return
    with tempfile.TemporaryDirectory(prefix=prefix) as tmp:
        yield Path(tmp)


def _rel(value, ref) -> float:
    return abs(value / ref - 1.0) if math.isfinite(value) else math.inf


def run_re40(case, printer=print) -> dict:
    """Run the steady case; drag from the end of the history, L/D from the final state."""
    from solver.output import read_snapshot
    from solver.run import run_case
    from tools.report import analyse
    from tools.wake import recirculation_length

    t0 = time.perf_counter()
    r = run_case(case, printer=printer)
    wall = time.perf_counter() - t0
    snap = read_snapshot(r["snapshot"])
    res = analyse(r["run_dir"])
    h = res["history"]
    tt, cd = h["time"], h["cd"]
    last = tt >= tt[-1] - 5.0
    ref_len = res["reference_length"]
    mesh = case.mesh.params
    centre = (mesh.get("centre_x", 0.0), mesh.get("centre_y", 0.0))
    rec = recirculation_length(snap, centre, mesh.get("radius", 0.5))
    drift = float((cd[last][-1] - cd[last][0]) / cd[last].mean())
    return {"cd": float(cd[-1]), "cd_pressure": float(h["cd_pressure"][-1]), "cd_viscous": float(h["cd_viscous"][-1]),
            "cl": float(h["cl"][-1]), "L_over_D": rec["L_over_D"], "u_min": rec["u_min"],
            "drag_drift_last_5": drift, "t_end": float(tt[-1]), "wall": wall, "dof": r["dof"],
            "reference_length": ref_len}


def run_re100(case, printer=print) -> dict:
    """Run the shedding case; St, mean drag and lift amplitude over the settled whole cycles."""
    from solver.run import run_case
    from tools.report import analyse

    t0 = time.perf_counter()
    r = run_case(case, printer=printer)
    wall = time.perf_counter() - t0
    res = analyse(r["run_dir"])
    out = {"wall": wall, "dof": r["dof"], "t_end": float(res["t_range"][1]), "window": res["window"]}
    st = res["strouhal"]
    if st is None:
        out.update(st=math.nan, st_crossings=math.nan, cd=res["coefficients"]["cd"]["mean"],
                   cl_amplitude=res["coefficients"]["cl"]["amplitude"], period_variation=math.inf,
                   amplitude_variation=math.inf, cycles=0)
        return out
    per = res["periodicity"]
    out.update(st=st["spectral"], st_crossings=st["crossings"], cd=res["coefficients"]["cd"]["mean"],
               cd_amplitude=res["coefficients"]["cd"]["amplitude"], cl_amplitude=res["coefficients"]["cl"]["amplitude"],
               cl_rms=res["coefficients"]["cl"]["rms"], period_variation=per["period_variation"],
               amplitude_variation=per["amplitude_variation"], cycles=per["cycles"])
    return out


def _describe(case) -> str:
    m = case.mesh.params
    ref = case.reference_state()
    D = 2.0 * m.get("radius", 0.5)
    return (f"O-grid {m.get('n_around', 48)} x {m.get('n_radial', 24)} elements (around x radial), geometry q = "
            f"{m.get('q', 3)}, far-field circle at {m.get('far_radius', 50.0) / D:g} D, degree p = "
            f"{case.scheme.degree}, Mach {ref['mach']:g}, {case.time.scheme} at CFL fraction {case.time.cfl:g}, "
            f"t_end = {case.time.end:g}")


def verify_cylinder(quick: bool = False, printer=print, keep: str | None = None) -> dict:
    """Run both cases and compare with the references; returns the measured values and PASS/FAIL.

    Parameters
    ----------
    quick : bool
        Coarse, short runs with looser tolerances (CI).
    keep : str, optional
        Folder for the run folders (default: a temporary folder, removed afterwards).
    """
    cfg = QUICK if quick else FULL
    tol = cfg["tol"]
    printer("laminar cylinder wake: Re = 40 (steady) and Re = 100 (shedding)" + (" -- quick form" if quick else ""))
    for k, (v, src) in REFERENCES.items():
        printer(f"  reference {k}: {v:.4f}  ({src})")
    quiet = (lambda *a, **k: None)
    with work_folder(keep, "quadfr-verify-cylinder-") as folder:
        c40 = case_variant(CASES / cfg["re40"]["case"], folder, cfg["re40"]["overrides"], "re40")
        c100 = case_variant(CASES / cfg["re100"]["case"], folder, cfg["re100"]["overrides"], "re100")
        printer(f"  Re = 40 : {_describe(c40)}")
        printer(f"  Re = 100: {_describe(c100)}; kick {c100.kick.speed:g} U_inf for t < {c100.kick.duration:g}"
                if c100.kick is not None else f"  Re = 100: {_describe(c100)}")
        r40 = run_re40(c40, printer=quiet)
        printer(f"  Re = 40 : {r40['dof']} DoF, wall {r40['wall']:.1f} s; drag drift over the last 5 time units "
                f"{100 * r40['drag_drift_last_5']:+.3f} %")
        r100 = run_re100(c100, printer=quiet)
        printer(f"  Re = 100: {r100['dof']} DoF, wall {r100['wall']:.1f} s; window t = {r100['window'][0]:.2f} .. "
                f"{r100['window'][1]:.2f} ({r100['cycles']} cycles); St from zero crossings "
                f"{r100['st_crossings']:.4f}; period varies {100 * r100['period_variation']:.2f} %, amplitude "
                f"{100 * r100['amplitude_variation']:.2f} %")
    rows = [("cd40", "Re 40 drag coefficient", r40["cd"]), ("lod40", "Re 40 recirculation length L/D", r40["L_over_D"]),
            ("st100", "Re 100 Strouhal number", r100["st"]), ("cd100", "Re 100 mean drag coefficient", r100["cd"]),
            ("clamp100", "Re 100 lift amplitude", r100["cl_amplitude"])]
    printer(f"  {'quantity':<34} {'computed':>9} {'reference':>9} {'error':>8} {'tolerance':>9}")
    passed = True
    table = []
    for key, label, val in rows:
        ref = REFERENCES[key][0]
        err = _rel(val, ref)
        ok = err <= tol[key]
        passed &= ok
        table.append({"quantity": key, "computed": val, "reference": ref, "error": err, "tolerance": tol[key],
                      "passed": bool(ok), "source": REFERENCES[key][1]})
        printer(f"  {label:<34} {val:9.4f} {ref:9.4f} {100 * err:7.2f}% {100 * tol[key]:8.1f}%  "
                f"{'PASS' if ok else 'FAIL'}")
    per_ok = r100["period_variation"] <= cfg["periodic"] and r100["amplitude_variation"] <= cfg["periodic"]
    passed &= per_ok
    printer(f"  Re 100 shedding periodic (cycle-to-cycle variation <= {100 * cfg['periodic']:.0f} %): "
            f"{'PASS' if per_ok else 'FAIL'}")
    printer(f"  wall time: Re 40 {r40['wall']:.1f} s, Re 100 {r100['wall']:.1f} s (this machine, JIT included)")
    printer(f"cylinder: {'PASS' if passed else 'FAIL'}")
    return {"check": "cylinder", "quick": bool(quick), "passed": bool(passed), "table": table, "re40": r40,
            "re100": {k: v for k, v in r100.items()}, "periodic": bool(per_ok),
            "setup": {"re40": _describe(c40), "re100": _describe(c100)}}
