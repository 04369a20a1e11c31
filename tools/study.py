"""``quadfr study``: run a case at several degrees and mesh levels and tabulate its outputs.

A study is the set of *levels* ``degrees x meshes``.  Each level is the
user's case file with ``[scheme] degree`` and ``[mesh]`` replaced and
``[output] directory`` pointed at the level's folder; the level's case file
is written to ``<study>/levels/<label>/case.toml`` and validated by
:func:`solver.case.load_case` before anything runs.  Mesh levels are either
refinement factors of the case's generator (see :data:`REFINE_RULES`) or
mesh files.

Levels run in worker processes (``concurrent.futures`` with the ``spawn``
start method) each limited to ``threads`` numba threads, with
``jobs x threads <= cores``; ``jobs = 1`` runs them in this process.  A level
that fails (an exception, a non-finite solution or output) is recorded with
its message and the others carry on.

On each finished level the output function of :mod:`tools.study_outputs`
(default :func:`tools.report.summarize`) gives named outputs.  For each
output the study tabulates every level with its DoF, wall time and the
change from the next coarser level, and where a sequence (mesh refinement
at one degree, or degree refinement on one mesh) has three or more levels,
the Richardson estimate, apparent order and grid convergence index of its
three finest levels (:mod:`tools.richardson`; representative spacing
``h = DoF^(-1/2)``).  It then names the cheapest level whose outputs are
within the tolerance of the reference value (the exact value if known,
else the best extrapolation, else the finest level).
"""
from __future__ import annotations

import csv
import io
import json
import math
import os
import re
import shutil
import threading
import time
import tomllib
from dataclasses import asdict, dataclass, field
from pathlib import Path

__all__ = ["Level", "REFINE_RULES", "parse_meshes", "parse_degrees", "parse_tolerance", "refined_mesh_table",
           "toml_dumps", "plan_study", "run_study", "load_study", "default_study_dir", "analyse", "markdown_report", "levels_csv", "plot_study",
           "available_cores", "main"]

#: How a refinement factor f acts on each generator's parameters (parameters not listed stay):
#: ``count`` n -> round(f n) (>= 1); ``count-even`` the same rounded to an even number;
#: ``length`` x -> x / f (only when x > 0; 0 means "not given");
#: ``ratio`` g -> g^(1/f) (a geometric growth ratio, so the layer sizes follow the same
#: continuous distribution with f times as many layers; only when g > 0);
#: ``slope`` g -> 1 + (g - 1) / f (the spacing slope of a linear size field h = h_w + (g - 1) d).
REFINE_RULES: dict[str, dict[str, str]] = {
    "box": {"nx": "count", "ny": "count"},
    "cylinder": {"n_radial": "count", "n_around": "count", "first_height": "length", "growth": "ratio"},
    "naca": {"n_around": "count-even", "n_radial": "count", "first_height": "length", "growth": "ratio"},
    "section": {"n_radial": "count", "n_around": "count", "first_height": "length", "growth": "ratio"},
    "plate": {"nx_plate": "count", "nx_upstream": "count", "ny": "count", "le_spacing": "length",
              "first_height": "length", "growth": "ratio"},
    "blocks": {"wall_spacing": "length", "max_spacing": "length", "growth": "slope"},
    "towers": {"wall_spacing": "length", "max_spacing": "length", "growth": "slope"},
}

_MARKER = ".quadfr-study-level"


class StudyError(ValueError):
    """Bad study options; the message names the option."""


# ---------------------------------------------------------------------------
# options
# ---------------------------------------------------------------------------
def available_cores() -> int:
    """Cores this process may run on."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not Linux
        return os.cpu_count() or 1


def parse_degrees(text: str) -> list[int]:
    """``"1,2,3"`` or ``"1-4"`` -> [1, 2, 3(, 4)]; each 1..8, no repeats."""
    out = []
    for part in str(text).split(","):
        part = part.strip()
        m = re.fullmatch(r"(\d+)\s*-\s*(\d+)", part)
        try:
            vals = list(range(int(m.group(1)), int(m.group(2)) + 1)) if m else [int(part)]
        except ValueError:
            raise StudyError(f"--degrees: '{part}' is not a degree (an integer 1..8, e.g. 1,2,3 or 1-4)") from None
        out += vals
    for p in out:
        if not 1 <= p <= 8:
            raise StudyError(f"--degrees: degree {p} is outside 1..8")
    if len(set(out)) != len(out):
        raise StudyError(f"--degrees: a degree is repeated in '{text}'")
    return out


@dataclass(frozen=True)
class MeshLevel:
    """One mesh level: a refinement factor of the case's generator, or a mesh file."""

    label: str
    factor: float | None = None
    file: Path | None = None


def parse_meshes(text: str | None) -> list[MeshLevel]:
    """``"0.5,1,2"`` (refinement factors) or ``"a.h5,b.msh"`` (files, relative to the current folder)."""
    if text is None or str(text).strip() == "":
        return [MeshLevel("x1", factor=1.0)]
    items = [s.strip() for s in str(text).split(",") if s.strip()]
    nums = []
    for s in items:
        try:
            nums.append(float(s))
        except ValueError:
            nums.append(None)
    if all(v is not None for v in nums):
        for s, v in zip(items, nums):
            if not (v > 0 and math.isfinite(v)):
                raise StudyError(f"--meshes: refinement factor '{s}' must be a positive number")
        if len(set(nums)) != len(nums):
            raise StudyError(f"--meshes: a refinement factor is repeated in '{text}'")
        return [MeshLevel(f"x{v:g}", factor=v) for v in nums]
    if any(v is not None for v in nums):
        raise StudyError(f"--meshes: give either refinement factors or mesh files, not both: '{text}'")
    out, labels = [], set()
    for s in items:
        f = Path(s).expanduser().resolve()
        if not f.is_file():
            raise StudyError(f"--meshes: mesh file '{f}' not found")
        label = re.sub(r"[^A-Za-z0-9_.-]", "_", f.stem)
        k = 2
        base = label
        while label in labels:
            label, k = f"{base}-{k}", k + 1
        labels.add(label)
        out.append(MeshLevel(label, file=f))
    return out


def parse_tolerance(text) -> tuple[float, dict]:
    """``"0.01"``, ``"1%"`` or ``"St=0.5%,mean_cd=0.01[,0.02]"`` -> (default, {output: tol}).

    A bare number is the default for every output; ``name=value`` sets one output.
    """
    default, per = 0.01, {}
    if text is None:
        return default, per

    def num(s: str, where: str) -> float:
        s = s.strip()
        try:
            v = float(s[:-1]) / 100.0 if s.endswith("%") else float(s)
        except ValueError:
            raise StudyError(f"--tolerance: {where} '{s}' is not a number (e.g. 0.01 or 1%)") from None
        if not (v > 0 and math.isfinite(v)):
            raise StudyError(f"--tolerance: {where} must be positive, got '{s}'")
        return v

    for part in str(text).split(","):
        if not part.strip():
            continue
        if "=" in part:
            k, v = part.split("=", 1)
            per[k.strip()] = num(v, f"value of '{k.strip()}'")
        else:
            default = num(part, "value")
    return default, per


# ---------------------------------------------------------------------------
# level case files
# ---------------------------------------------------------------------------
def _plain(v):
    if isinstance(v, tuple):
        v = list(v)
    if isinstance(v, list):
        return [_plain(x) for x in v]
    return v


def refined_mesh_table(case, factor: float) -> tuple[dict, dict]:
    """The ``[mesh]`` table of ``case`` refined by ``factor``.

    Returns
    -------
    table : dict
        Generator name and every parameter (file parameters as absolute paths).
    changed : dict
        Parameter -> (old, new) for the parameters the factor changed.

    Raises
    ------
    StudyError
        The case reads a mesh file, or its generator has no refinement rule.
    """
    import inspect

    from solver.case import generator_function, generator_parameters

    spec = case.mesh
    if spec.generator is None:
        if factor == 1.0:
            return {"file": str(spec.file)}, {}
        raise StudyError(f"--meshes: {case.path.name} reads the mesh file '{spec.file}', which a refinement factor "
                         "cannot refine; list mesh files instead (--meshes a.h5,b.h5,c.h5)")
    rules = REFINE_RULES.get(spec.generator)
    if rules is None and factor != 1.0:
        raise StudyError(f"--meshes: no refinement rule for generator '{spec.generator}' (rules exist for "
                         f"{', '.join(REFINE_RULES)}); list mesh files instead")
    params = generator_parameters(generator_function(spec.generator))
    table = {"generator": spec.generator}
    table.update({k: _plain(v) for k, v in spec.params.items()})
    changed = {}
    for name, rule in (rules or {}).items():
        if factor == 1.0 or name not in params:
            continue
        old = table.get(name, params[name].default)
        if old is inspect.Parameter.empty:
            continue
        if rule == "count":
            new = max(1, int(round(factor * old)))
        elif rule == "count-even":
            new = max(2, 2 * int(round(factor * old / 2.0)))
        elif rule == "length":
            new = old / factor if old > 0 else old
        elif rule == "ratio":
            new = old ** (1.0 / factor) if old > 0 else old
        elif rule == "slope":
            new = 1.0 + (old - 1.0) / factor
        else:  # a rule table typo is our bug, not the user's
            raise AssertionError(f"unknown refinement rule {rule!r}")
        if new != old:
            table[name] = new
            changed[name] = (old, new)
    return table, changed


_BARE = re.compile(r"[A-Za-z0-9_-]+")


def _toml_key(k: str) -> str:
    return k if _BARE.fullmatch(k) else json.dumps(k, ensure_ascii=False)


def _toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return repr(v) if math.isfinite(v) else ("nan" if math.isnan(v) else ("inf" if v > 0 else "-inf"))
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{_toml_key(k)} = {_toml_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(f"cannot write {type(v).__name__} to TOML")


def toml_dumps(data: dict, header: str = "") -> str:
    """TOML text of a case-file dict: top-level scalars, then one ``[section]`` per table.

    Values inside a section that are tables are written inline (``{ type = ... }``).
    """
    out = [f"# {line}" for line in header.splitlines()]
    for k, v in data.items():
        if not isinstance(v, dict):
            out.append(f"{_toml_key(k)} = {_toml_value(v)}")
    for k, v in data.items():
        if isinstance(v, dict):
            out.append(f"\n[{_toml_key(k)}]")
            out += [f"{_toml_key(a)} = {_toml_value(b)}" for a, b in v.items()]
    return "\n".join(out) + "\n"


def level_case_data(case, degree: int, mesh: MeshLevel) -> tuple[dict, dict]:
    """Case-file dict of one level: the case with degree, mesh and output folder replaced."""
    data = tomllib.loads(case.text)
    data.setdefault("scheme", {})["degree"] = int(degree)
    if mesh.file is not None:
        data["mesh"], changed = {"file": str(mesh.file)}, {}
    else:
        data["mesh"], changed = refined_mesh_table(case, mesh.factor)
    data.setdefault("output", {})["directory"] = "."
    return data, changed


# ---------------------------------------------------------------------------
# levels
# ---------------------------------------------------------------------------
@dataclass
class Level:
    """One level of a study and, once run, what it measured.

    Attributes
    ----------
    label : str
        ``p<degree>-<mesh label>``.
    degree, mesh, mesh_index : int, str, int
    case_path : str
        The level's case file (its folder is the run folder).
    elements, dof : int
        Mesh elements; degrees of freedom = elements (p+1)^2 x 4.
    est_steps, stages : int
        Time steps expected from the initial stable step; RHS evaluations per step.
    changed : dict
        Mesh parameters the refinement factor changed: name -> [old, new].
    status : str
        ``planned``, ``ok``, ``failed`` or ``skipped``.
    error : str
        Why a level failed or was skipped.
    wall, cpu : float
        Wall and process CPU seconds of the run (time loop, output, start-up of the run).
    steps, rhs : int
        Time steps and RHS evaluations taken.
    outputs : dict
        Output name -> value.
    """

    label: str
    degree: int
    mesh: str
    mesh_index: int
    case_path: str
    elements: int = 0
    dof: int = 0
    est_steps: int = 0
    stages: int = 0
    changed: dict = field(default_factory=dict)
    status: str = "planned"
    error: str = ""
    wall: float = float("nan")
    cpu: float = float("nan")
    steps: int = 0
    rhs: int = 0
    outputs: dict = field(default_factory=dict)

    @property
    def run_dir(self) -> Path:
        return Path(self.case_path).parent

    @property
    def work(self) -> float:
        """Estimated DoF x RHS evaluations (for progress and the ``work`` cost)."""
        return float(self.dof) * max(self.est_steps, 1) * max(self.stages, 1)


def _prepare_folder(d: Path) -> None:
    """Create an empty level folder; an old one is removed only if a study made it."""
    if d.exists():
        if not (d / _MARKER).is_file():
            raise StudyError(f"level folder '{d}' exists and was not made by quadfr study; remove it or choose "
                             "another --out")
        shutil.rmtree(d)
    d.mkdir(parents=True)
    (d / _MARKER).write_text("made by quadfr study; removed and rebuilt when the study runs again\n")


def plan_study(case, degrees, meshes, study_dir, max_dof: float | None = None) -> list[Level]:
    """Write and validate each level's case file; measure its DoF and expected number of steps.

    A level whose case is invalid or whose problem cannot be built is marked
    ``failed`` with the message; one above ``max_dof`` is ``skipped``.
    Nothing is run.
    """
    from solver.case import load_case
    from solver.run import build_problem
    from solver.timeschemes import TIME_SCHEMES

    study_dir = Path(study_dir)
    levels = []
    for mi, mesh in enumerate(meshes):
        for p in degrees:
            label = f"p{p}-{mesh.label}"
            d = study_dir / "levels" / label
            lv = Level(label=label, degree=int(p), mesh=mesh.label, mesh_index=mi, case_path=str(d / "case.toml"))
            levels.append(lv)
            try:
                data, changed = level_case_data(case, p, mesh)
                lv.changed = {k: [a, b] for k, (a, b) in changed.items()}
                _prepare_folder(d)
                text = toml_dumps(data, header=f"level {label} of a study of {case.path}\nwritten by quadfr study")
                tmp = d / "case.toml.tmp"
                tmp.write_text(text, encoding="utf-8")
                os.replace(tmp, d / "case.toml")
                lcase = load_case(d / "case.toml")
                prob = build_problem(lcase)
                lv.elements = int(prob.mesh.n_elements)
                lv.dof = int(prob.op.ndof)
                # explicit schemes: RHS evaluations per step; dual time stepping: unknown beforehand (1)
                sch = lcase.time.scheme
                lv.stages = int(getattr(TIME_SCHEMES[sch].obj, "stages", 1)) if sch in TIME_SCHEMES else 1
                if lcase.time.steps is not None:
                    lv.est_steps = int(lcase.time.steps)
                else:
                    lv.est_steps = int(math.ceil(lcase.time.end / prob.stepper.stable_dt(prob.U0)))
                del prob
            except StudyError:
                raise
            except Exception as exc:  # noqa: BLE001 - the level fails, the study goes on
                lv.status, lv.error = "failed", f"{type(exc).__name__}: {exc}"
                continue
            if max_dof is not None and lv.dof > max_dof:
                lv.status, lv.error = "skipped", f"{lv.dof} DoF > --max-dof {max_dof:g}"
    return levels


# ---------------------------------------------------------------------------
# running
# ---------------------------------------------------------------------------
_QUEUE = None


def _init_worker(threads: int, queue) -> None:
    """Worker start: limit numba's threads before numba is imported, keep the progress queue."""
    global _QUEUE
    os.environ["NUMBA_NUM_THREADS"] = str(int(threads))
    import numba

    numba.set_num_threads(int(threads))
    _QUEUE = queue


_WARM: set = set()


def warm_up(case) -> None:
    """Load the numba kernels a case uses, once per process, on a 3 x 3 box.

    The first call of each compiled kernel in a process reads it from numba's
    cache (about 0.4 s measured); doing that here keeps it out of the first
    level's wall time.  The kernels depend on the physics (viscous or not),
    the flux and the time scheme, not on the degree or the mesh size.
    """
    import numpy as np

    from meshing.box import box_mesh
    from solver.basis import make_basis
    from solver.operator import FROperator
    from solver.stepper import ExplicitStepper

    from solver.timeschemes import TIME_SCHEMES

    ref = case.reference_state()
    # a dual-time (BDF) case warms the explicit kernels only; its pseudo-time kernels load in the run
    scheme = case.time.scheme if case.time.scheme in TIME_SCHEMES else "ssp-rk33"
    key = (ref.get("reynolds") is None, case.scheme.flux, scheme, ref.get("viscosity"))
    if key in _WARM:
        return
    mesh = box_mesh(3, 3, (0.0, 1.0, 0.0, 1.0), q=1, periodic=(True, False), name="warm-up")
    visc = None
    if ref.get("reynolds") is not None:
        visc = dict(mu=ref["mu"], prandtl=ref["prandtl"], law=ref["viscosity"], s_ratio=ref["sutherland_ratio"])
    basis = make_basis(case.scheme.degree, case.scheme.points, case.scheme.correction, scheme)
    op = FROperator(mesh, basis, ref["gamma"], flux=case.scheme.flux, ref=ref, viscosity=visc,
                    boundaries={"bottom": ("fixed-state", {}), "top": ("fixed-state", {})})
    from solver.initial import uniform_state

    U = np.ascontiguousarray(uniform_state(op.metrics.xy, ref))
    st = ExplicitStepper(op, scheme, cfl=0.5)
    st.step(U, 0.0, 0.1 * st.stable_dt(U))
    _WARM.add(key)


def run_level(label: str, case_path: str, outputs: str, t_from=None, printer=None) -> dict:
    """Run one level's case and evaluate its outputs; never raises.

    Returns
    -------
    dict
        ``label, status ('ok' | 'failed'), error, wall, cpu, steps, rhs, dof, outputs``.
    """
    from solver.case import load_case
    from solver.run import run_case
    from tools.study_outputs import STUDY_OUTPUTS

    if printer is None:
        q = _QUEUE
        printer = (lambda line: q.put((label, str(line)))) if q is not None else (lambda line: None)
    res = {"label": label, "status": "failed", "error": "", "wall": float("nan"), "cpu": float("nan"), "steps": 0,
           "rhs": 0, "dof": 0, "outputs": {}}
    c0 = time.process_time()
    w0 = time.perf_counter()
    try:
        case = load_case(case_path)
        try:
            warm_up(case)
        except Exception:  # noqa: BLE001 - only a timing aid; the run itself reports real problems
            pass
        c0 = time.process_time()
        w0 = time.perf_counter()
        r = run_case(case, printer=printer)
        res.update(wall=float(r.get("wall", time.perf_counter() - w0)), cpu=time.process_time() - c0,
                   steps=int(r.get("step", 0)), rhs=int(r.get("rhs_evaluations", 0)), dof=int(r.get("dof", 0)))
        if r.get("status", "finished") != "finished":  # e.g. Ctrl-C: the run wrote a checkpoint and stopped
            res["error"] = f"run {r.get('status')} at t = {r.get('time', float('nan')):.6g} before the end"
            res["interrupted"] = r.get("status") == "interrupted"
            return res
    except BaseException as exc:  # noqa: BLE001 - reported as a failed level
        if isinstance(exc, KeyboardInterrupt):
            raise
        res.update(wall=time.perf_counter() - w0, cpu=time.process_time() - c0,
                   error=f"{type(exc).__name__}: {exc}")
        return res
    try:
        vals = STUDY_OUTPUTS[outputs].obj.fn(Path(case_path).parent, t_from=t_from)
    except Exception as exc:  # noqa: BLE001
        res["error"] = f"outputs '{outputs}': {type(exc).__name__}: {exc}"
        return res
    vals = {str(k): float(v) for k, v in vals.items()}
    bad = [k for k, v in vals.items() if not math.isfinite(v)]
    res["outputs"] = vals
    if bad:
        res["error"] = f"output {', '.join(bad)} is not finite"
        return res
    res["status"] = "ok"
    return res


def _fmt_s(s: float) -> str:
    if not math.isfinite(s):
        return "?"
    return f"{s:.1f} s" if s < 120 else (f"{s / 60:.1f} min" if s < 7200 else f"{s / 3600:.1f} h")


def default_study_dir(case_path) -> Path:
    """``runs/<case stem>-study`` beside the case file."""
    p = Path(case_path).resolve()
    return p.parent / "runs" / f"{p.stem}-study"


def run_study(case_path, degrees, meshes=None, jobs: int = 1, threads: int | None = None, outputs: str = "auto",
              t_from=None, study_dir=None, max_dof=None, printer=print, quiet_levels: bool = False) -> dict:
    """Plan and run a study; returns ``{"case", "outputs", "levels": [Level, ...], "jobs", "threads", ...}``.

    Parameters
    ----------
    case_path : path
        The case file.
    degrees : list of int
    meshes : list of MeshLevel, optional
        Default: the case's own mesh.
    jobs : int
        Levels run at once (worker processes; 1 = in this process).
    threads : int, optional
        numba threads per level (default ``cores // jobs``); ``jobs x threads <= cores``.
    outputs : str
        Name in :data:`tools.study_outputs.STUDY_OUTPUTS`, or ``auto``.
    t_from : float, optional
        Passed to the output function (start of the averaging window).
    study_dir : path, optional
        Default ``runs/<case stem>-study`` beside the case file.
    max_dof : float, optional
        Levels with more DoF are skipped.
    printer : callable
    quiet_levels : bool
        Do not forward the levels' own progress lines.
    """
    from solver.case import load_case
    from tools.study_outputs import choose_outputs

    case = load_case(case_path)
    cores = available_cores()
    jobs = int(jobs)
    if jobs < 1:
        raise StudyError(f"--jobs must be >= 1, got {jobs}")
    threads = max(1, cores // jobs) if threads is None else int(threads)
    if threads < 1:
        raise StudyError(f"--threads must be >= 1, got {threads}")
    if jobs * threads > cores:
        raise StudyError(f"--jobs {jobs} x --threads {threads} = {jobs * threads} exceeds the {cores} cores of "
                         "this machine")
    outputs = choose_outputs(case, outputs)
    meshes = meshes or [MeshLevel("x1", factor=1.0)]
    study_dir = Path(study_dir) if study_dir else default_study_dir(case.path)
    study_dir.mkdir(parents=True, exist_ok=True)

    levels = plan_study(case, degrees, meshes, study_dir, max_dof)
    todo = [lv for lv in levels if lv.status == "planned"]
    total_work = sum(lv.work for lv in todo) or 1.0
    printer(f"study of {case.path.name}: {len(levels)} levels ({len(todo)} to run), outputs '{outputs}', "
            f"{jobs} job(s) x {threads} thread(s) on {cores} cores; folder {study_dir}")
    printer(f"  {'level':<14} {'elements':>9} {'DoF':>10} {'steps~':>8} {'work %':>7}  status")
    for lv in levels:
        share = f"{100 * lv.work / total_work:6.1f}" if lv.status == "planned" else "     -"
        printer(f"  {lv.label:<14} {lv.elements:9d} {lv.dof:10d} {lv.est_steps:8d} {share:>7}  "
                f"{lv.status}{': ' + lv.error if lv.error else ''}")

    by_label = {lv.label: lv for lv in levels}
    t0 = time.perf_counter()
    done_work = [0.0]
    n_done = [0]

    def finished(res: dict) -> None:
        lv = by_label[res["label"]]
        lv.status, lv.error = res["status"], res["error"]
        lv.wall, lv.cpu, lv.steps, lv.rhs = res["wall"], res["cpu"], res["steps"], res["rhs"]
        lv.outputs = res["outputs"]
        if res["dof"]:
            lv.dof = res["dof"]
        n_done[0] += 1
        done_work[0] += lv.work
        frac = done_work[0] / total_work
        el = time.perf_counter() - t0
        # the work model (DoF x steps x stages) ignores per-level overheads: no ETA from the first few per cent
        eta = el * (1 - frac) / frac if frac >= 0.05 else float("nan")
        nfail = sum(1 for x in levels if x.status == "failed")
        what = f"finished in {_fmt_s(lv.wall)}" if lv.status == "ok" else f"FAILED ({lv.error})"
        printer(f"study: {lv.label} {what}; {n_done[0]}/{len(todo)} levels done ({nfail} failed), "
                f"{100 * frac:.0f} % of the work, elapsed {_fmt_s(el)}, ETA {_fmt_s(eta)}")

    if jobs == 1 or len(todo) <= 1:
        import numba

        old = numba.get_num_threads()
        numba.set_num_threads(min(threads, numba.config.NUMBA_NUM_THREADS))
        try:
            for lv in todo:
                pr = (lambda line: None) if quiet_levels else (lambda line, _l=lv.label: printer(f"[{_l}] {line}"))
                res = run_level(lv.label, lv.case_path, outputs, t_from, printer=pr)
                finished(res)
                if res.get("interrupted"):  # Ctrl-C stops the whole study, not only this level
                    raise KeyboardInterrupt
        finally:
            numba.set_num_threads(old)
    else:
        _run_pool(todo, jobs, threads, outputs, t_from, printer, quiet_levels, finished)

    return {"case": str(case.path), "study_dir": str(study_dir), "outputs": outputs, "jobs": jobs,
            "threads": threads, "cores": cores, "degrees": list(degrees), "meshes": [m.label for m in meshes],
            "levels": levels, "elapsed": time.perf_counter() - t0}


def _run_pool(todo, jobs, threads, outputs, t_from, printer, quiet, finished) -> None:
    import multiprocessing as mp
    from concurrent.futures import ProcessPoolExecutor, as_completed

    ctx = mp.get_context("spawn")  # fresh interpreters: numba's thread count is set before it is imported
    queue = ctx.Queue()
    stop = threading.Event()

    def drain():
        import queue as _q

        while not stop.is_set() or not queue.empty():
            try:
                label, line = queue.get(timeout=0.1)
            except _q.Empty:
                continue
            except (EOFError, OSError):
                return
            if not quiet:
                printer(f"[{label}] {line}")

    th = threading.Thread(target=drain, daemon=True)
    th.start()
    try:
        with ProcessPoolExecutor(max_workers=jobs, mp_context=ctx, initializer=_init_worker,
                                 initargs=(threads, queue)) as pool:
            # the most expensive levels first, so the last ones to finish are short
            futs = {pool.submit(run_level, lv.label, lv.case_path, outputs, t_from): lv
                    for lv in sorted(todo, key=lambda x: -x.work)}
            for fut in as_completed(futs):
                lv = futs[fut]
                try:
                    res = fut.result()
                except Exception as exc:  # noqa: BLE001 - e.g. a worker process that died
                    res = {"label": lv.label, "status": "failed", "error": f"worker: {type(exc).__name__}: {exc}",
                           "wall": float("nan"), "cpu": float("nan"), "steps": 0, "rhs": 0, "dof": 0,
                           "outputs": {}}
                finished(res)
    finally:
        stop.set()
        th.join(timeout=5)
        queue.close()


# ---------------------------------------------------------------------------
# analysis
# ---------------------------------------------------------------------------
def _sequences(levels) -> list[dict]:
    """Refinement sequences: the meshes at each degree, and the degrees on each mesh (>= 2 levels)."""
    seqs = []
    degrees = sorted({lv.degree for lv in levels})
    meshes = sorted({(lv.mesh_index, lv.mesh) for lv in levels})
    if len(meshes) > 1:
        for p in degrees:
            seqs.append({"name": f"meshes at p = {p}", "kind": "mesh", "key": p,
                         "levels": [lv for lv in levels if lv.degree == p]})
    if len(degrees) > 1:
        for mi, m in meshes:
            seqs.append({"name": f"degrees on mesh {m}", "kind": "degree", "key": m,
                         "levels": [lv for lv in levels if lv.mesh_index == mi]})
    return [s for s in seqs if len(s["levels"]) >= 2]


def analyse(study: dict, tolerance=0.01, cost: str = "wall") -> dict:
    """Richardson estimates, reference values and the cheapest adequate level of each output.

    Parameters
    ----------
    study : dict
        As returned by :func:`run_study`.
    tolerance : float or (float, dict)
        Relative tolerance (fraction), or (default, {output: tolerance}).  Relative to
        the reference value; where the reference is 0 (an error against an exact
        solution) it is absolute.
    cost : str
        ``wall`` (measured seconds), ``cpu`` or ``work`` (DoF x RHS evaluations).

    Returns
    -------
    dict
        ``outputs``: per output name a dict with ``sequences`` (name, levels, values,
        ``richardson`` as a dict or None), ``reference``, ``reference_source``,
        ``tolerance``, ``within`` (labels), ``cheapest``, ``judged`` (bool); ``judged``: the names the
        verdict covers (:class:`tools.study_outputs.OutputProvider`); ``cheapest_all``: the
        cheapest level within tolerance on every output; ``accuracy``: the
        equal-error tables of outputs with an exact value.
    """
    from tools.accuracy import curves_from_levels, equal_error_table
    from tools.richardson import representative_spacing, richardson
    from tools.study_outputs import STUDY_OUTPUTS

    if cost not in ("wall", "cpu", "work"):
        raise StudyError(f"--cost must be wall, cpu or work, got '{cost}'")
    default_tol, per_tol = tolerance if isinstance(tolerance, tuple) else (float(tolerance), {})
    provider = STUDY_OUTPUTS[study["outputs"]].obj
    exact = provider.exact
    levels = study["levels"]
    ok = [lv for lv in levels if lv.status == "ok"]
    names = []
    for lv in ok:
        names += [k for k in lv.outputs if k not in names]

    def cost_of(lv):
        return lv.work_done if cost == "work" else getattr(lv, cost)

    for lv in ok:
        lv.work_done = float(lv.dof) * lv.rhs
    res: dict = {"outputs": {}, "cost": cost, "unknown_tolerances": sorted(set(per_tol) - set(names))}
    for name in names:
        seqs = []
        for s in _sequences(levels):
            lvs = sorted([lv for lv in s["levels"] if lv.status == "ok" and name in lv.outputs], key=lambda x: x.dof)
            if len(lvs) < 2:
                continue
            entry = {"name": s["name"], "kind": s["kind"], "levels": [lv.label for lv in lvs],
                     "values": [lv.outputs[name] for lv in lvs], "richardson": None}
            if len(lvs) >= 3:
                three = lvs[-3:][::-1]  # finest first
                h = [representative_spacing(lv.dof / 4.0) for lv in three]
                if h[0] < h[1] < h[2]:
                    rr = richardson(h, [lv.outputs[name] for lv in three])
                    entry["richardson"] = dict(rr.as_dict(), levels=[lv.label for lv in three])
            seqs.append(entry)
        if name in exact:
            ref, src = float(exact[name]), "exact value"
        else:
            good = [s for s in seqs if s["richardson"] and s["richardson"]["kind"] == "monotonic"
                    and math.isfinite(s["richardson"]["extrapolated"])]
            if good:
                best = min(good, key=lambda s: s["richardson"]["gci_abs"])
                ref = best["richardson"]["extrapolated"]
                src = f"Richardson estimate of {best['name']} ({', '.join(best['richardson']['levels'])})"
            else:
                fin = max((lv for lv in ok if name in lv.outputs), key=lambda x: (x.dof, x.degree))
                ref, src = fin.outputs[name], f"finest level {fin.label} (no monotonically converging 3-level sequence)"
        tol = per_tol.get(name, default_tol)
        band = tol * abs(ref) if ref != 0 else tol
        within = [lv for lv in ok if name in lv.outputs and abs(lv.outputs[name] - ref) <= band]
        cheapest = min(within, key=lambda x: (cost_of(x), x.dof)).label if within else None
        judged = (provider.judged is None or name in provider.judged or name in per_tol
                  or abs(ref) >= provider.judged_if_nonzero.get(name, math.inf))
        res["outputs"][name] = {"sequences": seqs, "reference": ref, "reference_source": src, "tolerance": tol,
                                "absolute": ref == 0, "source_exact": name in exact, "within": [lv.label for lv in within],
                                "cheapest": cheapest, "judged": bool(judged)}
    res["judged"] = [n for n in names if res["outputs"][n]["judged"]]
    if res["judged"]:
        allok = [lv for lv in ok if all(lv.label in res["outputs"][n]["within"] for n in res["judged"])]
        res["cheapest_all"] = min(allok, key=lambda x: (cost_of(x), x.dof)).label if allok else None
    else:
        res["cheapest_all"] = None
    acc = {}
    for name in names:
        if name in exact:
            acc[name] = {}
            for c in ("dof", "wall", "cpu"):
                curves = curves_from_levels(ok, name, c, exact[name])
                acc[name][c] = {"curves": {d: (x.tolist(), y.tolist()) for d, (x, y) in curves.items()},
                                "table": equal_error_table(curves) if 1 in curves else []}
    res["accuracy"] = acc
    return res


# ---------------------------------------------------------------------------
# reports
# ---------------------------------------------------------------------------
def _g(v, digits: int = 6) -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "—"
    return f"{v:.{digits}g}"


def _pct(v) -> str:
    return "—" if v is None or not math.isfinite(v) else f"{100 * v:.3g} %"


def markdown_report(study: dict, analysis: dict) -> str:
    """The study as Markdown: levels, one table per output, Richardson estimates, the verdict."""
    levels = study["levels"]
    by = {lv.label: lv for lv in levels}
    out = [f"# Study of `{Path(study['case']).name}`", "",
           f"Outputs `{study['outputs']}`; {study['jobs']} job(s) x {study['threads']} numba thread(s) on "
           f"{study['cores']} cores; cost measure: {analysis['cost']}. DoF = elements x (p+1)^2 x 4.", "",
           "## Levels", "",
           "| level | p | mesh | elements | DoF | steps | wall s | CPU s | status |",
           "|---|---|---|---|---|---|---|---|---|"]
    for lv in levels:
        st = lv.status if not lv.error else f"{lv.status}: {lv.error}"
        out.append(f"| {lv.label} | {lv.degree} | {lv.mesh} | {lv.elements} | {lv.dof} | {lv.steps or '—'} | "
                   f"{_g(lv.wall, 4)} | {_g(lv.cpu, 4)} | {st.replace('|', '/')} |")
    changed = {lv.mesh: lv.changed for lv in levels if lv.changed}
    if changed:
        out += ["", "Mesh refinement: " + "; ".join(
            f"{m}: " + ", ".join(f"{k} {_g(a)} -> {_g(b)}" for k, (a, b) in c.items()) for m, c in changed.items())]
    judged = analysis.get("judged", list(analysis["outputs"]))
    for name, a in analysis["outputs"].items():
        if name not in judged:
            continue
        out += ["", f"## `{name}`", ""]
        prim = next((s for s in a["sequences"] if s["kind"] == "mesh"), None)
        prev_of = {}
        for s in a["sequences"]:
            if prim is None or s["kind"] == "mesh":
                for x, y in zip(s["levels"], s["levels"][1:]):
                    prev_of[y] = x
        is_error = a["source_exact"]
        third = "observed order" if is_error else "rel. change"
        out += [f"| level | p | mesh | DoF | wall s | value | change | {third} | within tol. |",
                "|---|---|---|---|---|---|---|---|---|"]
        for lv in sorted((x for x in levels if x.status == "ok" and name in x.outputs), key=lambda x: (x.mesh_index,
                                                                                                         x.degree)):
            v = lv.outputs[name]
            pv = prev_of.get(lv.label)
            ch = v - by[pv].outputs[name] if pv else None
            if is_error:
                # error ~ h^k with h = DoF^(-1/2): k = -2 ln(e / e_prev) / ln(N / N_prev)
                e0, e1 = (abs(by[pv].outputs[name] - a["reference"]), abs(v - a["reference"])) if pv else (0, 0)
                rel = (-2.0 * math.log(e1 / e0) / math.log(lv.dof / by[pv].dof)
                       if pv and e0 > 0 and e1 > 0 and lv.dof != by[pv].dof else None)
                third_txt = _g(rel, 3)
            else:
                rel = ch / v if ch is not None and v != 0 else None
                third_txt = _pct(rel) if rel is not None else "—"
            out.append(f"| {lv.label} | {lv.degree} | {lv.mesh} | {lv.dof} | {_g(lv.wall, 4)} | {_g(v, 7)} | "
                       f"{_g(ch, 3)} | {third_txt} | {'yes' if lv.label in a['within'] else 'no'} |")
        if is_error:
            out += ["", "The exact value is known, so the observed order (with h = DoF^(-1/2)) replaces the "
                        "Richardson estimate."]
        rich = [s for s in a["sequences"] if s["richardson"]] if not is_error else []
        if rich:
            out += ["", "| sequence (3 finest levels) | apparent order | convergence | extrapolated | "
                        "GCI fine (rel.) | GCI fine (abs.) | GCI32/(r^p GCI21) |", "|---|---|---|---|---|---|---|"]
            for s in rich:
                r = s["richardson"]
                out.append(f"| {s['name']} ({', '.join(r['levels'])}) | {_g(r['order'], 3)} | {r['kind']} | "
                           f"{_g(r['extrapolated'], 7)} | {_pct(r['gci'])} | {_g(r['gci_abs'], 3)} | "
                           f"{_g(r['asymptotic'], 3)} |")
        tol = (f"{_g(a['tolerance'], 3)} (absolute)" if a["absolute"] else f"{100 * a['tolerance']:.3g} %")
        out += ["", f"Reference {_g(a['reference'], 7)} ({a['reference_source']}); tolerance {tol}; cheapest level "
                    f"within it: **{a['cheapest'] or 'none'}**."]
    others = [n for n in analysis["outputs"] if n not in judged]
    out += ["", "## Verdict", "",
            f"Cheapest level with every judged output ({', '.join(f'`{n}`' for n in judged) or 'none'}) within "
            f"tolerance: **{analysis['cheapest_all'] or 'none'}**."]
    if others:
        out.append(f"Further outputs, tabulated in `study.csv` and `study.json` but not judged (add one with "
                   f"`--tolerance NAME=TOL`): {', '.join(others)}.")
    if analysis.get("unknown_tolerances"):
        out.append(f"(Tolerances given for unknown outputs: {', '.join(analysis['unknown_tolerances'])}.)")
    for name, acc in analysis.get("accuracy", {}).items():
        for c, unit in (("dof", "DoF"), ("wall", "wall s"), ("cpu", "CPU s")):
            tab = acc[c]["table"]
            if not tab:
                continue
            degs = sorted(acc[c]["curves"])
            out += ["", f"## Accuracy per cost: `{name}` vs {unit} (log-log interpolation between measured levels)",
                    "", "| error | " + " | ".join(f"p = {d}" for d in degs) + f" | best p > 1 | {unit} ratio p = 1 / best |",
                    "|---|" + "---|" * (len(degs) + 2)]
            for row in tab:
                cells = [_g(row["costs"][d], 3) for d in degs]
                out.append(f"| {_g(row['target'], 3)} | " + " | ".join(cells) +
                           f" | {row['best_degree'] or '—'} | {_g(row['ratio'], 3)} |")
    return "\n".join(out) + "\n"


def levels_csv(study: dict, analysis: dict) -> str:
    """One row per level: label, degree, mesh, elements, DoF, steps, wall, CPU, status, then the outputs."""
    names = list(analysis["outputs"])
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["level", "degree", "mesh", "elements", "dof", "steps", "rhs", "wall_s", "cpu_s", "status", "error",
                *names])
    for lv in study["levels"]:
        w.writerow([lv.label, lv.degree, lv.mesh, lv.elements, lv.dof, lv.steps, lv.rhs, _csvnum(lv.wall),
                    _csvnum(lv.cpu), lv.status, lv.error, *(_csvnum(lv.outputs.get(n)) for n in names)])
    return buf.getvalue()


def richardson_csv(analysis: dict) -> str:
    """One row per output and sequence with a three-level estimate."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["output", "sequence", "levels", "order", "convergence", "extrapolated", "gci_rel", "gci_abs",
                "r21", "r32", "reference", "cheapest"])
    for name, a in analysis["outputs"].items():
        for s in a["sequences"]:
            r = s["richardson"]
            if r:
                w.writerow([name, s["name"], " ".join(r["levels"]), _csvnum(r["order"]), r["kind"],
                            _csvnum(r["extrapolated"]), _csvnum(r["gci"]), _csvnum(r["gci_abs"]), _csvnum(r["r21"]),
                            _csvnum(r["r32"]), _csvnum(a["reference"]), a["cheapest"] or ""])
    return buf.getvalue()


def _csvnum(v):
    if v is None:
        return ""
    return repr(float(v)) if isinstance(v, float) else v


def plot_study(study: dict, analysis: dict, path) -> Path | None:
    """Convergence plot (needs matplotlib): each output vs DoF, one line per degree or mesh.

    Outputs with an exact value are drawn as |error| on log-log axes against DoF
    and against wall time.  Returns the path, or None without matplotlib.
    """
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:
        return None
    from tools.study_outputs import STUDY_OUTPUTS

    exact = STUDY_OUTPUTS[study["outputs"]].obj.exact
    names = list(analysis.get("judged", analysis["outputs"]))
    if not names:
        return None
    panels = []
    for n in names:
        panels.append((n, "dof"))
        if n in exact:
            panels.append((n, "wall"))
    ncol = min(2, len(panels))
    nrow = math.ceil(len(panels) / ncol)
    fig, axes = plt.subplots(nrow, ncol, figsize=(6.0 * ncol, 4.2 * nrow), squeeze=False)
    ok = [lv for lv in study["levels"] if lv.status == "ok"]
    meshes = sorted({(lv.mesh_index, lv.mesh) for lv in ok})
    by_degree = len(meshes) > 1
    for ax, (name, xkey) in zip(axes.flat, panels):
        groups = {}
        for lv in ok:
            if name in lv.outputs:
                groups.setdefault(lv.degree if by_degree else lv.mesh, []).append(lv)
        for key, lvs in sorted(groups.items(), key=lambda kv: str(kv[0])):
            lvs.sort(key=lambda x: x.dof)
            x = [getattr(lv, xkey) for lv in lvs]
            y = [lv.outputs[name] for lv in lvs]
            if name in exact:
                y = [abs(v - exact[name]) for v in y]
            lab = f"p = {key}" if by_degree else f"mesh {key}"
            ax.plot(x, y, "o-", label=lab)
            if not by_degree:
                for lv, xi, yi in zip(lvs, x, y):
                    ax.annotate(f"p{lv.degree}", (xi, yi), textcoords="offset points", xytext=(4, 4), fontsize=8)
        a = analysis["outputs"][name]
        ax.set_xscale("log")
        if name in exact:
            ax.set_yscale("log")
            ax.set_ylabel(f"|{name}|")
        else:
            ax.axhline(a["reference"], color="k", ls="--", lw=0.8, label="reference")
            band = a["tolerance"] * abs(a["reference"]) if a["reference"] != 0 else a["tolerance"]
            ax.axhspan(a["reference"] - band, a["reference"] + band, color="0.85", zorder=0, label="tolerance")
            ax.set_ylabel(name)
        ax.set_xlabel("DoF (elements (p+1)^2 x 4)" if xkey == "dof" else "wall time (s)")
        ax.grid(True, which="both", alpha=0.3)
        ax.legend(fontsize=8)
    for ax in list(axes.flat)[len(panels):]:
        ax.set_visible(False)
    fig.suptitle(f"study of {Path(study['case']).name}")
    fig.tight_layout()
    path = Path(path)
    tmp = path.with_name(path.stem + ".tmp" + path.suffix)
    fig.savefig(tmp, dpi=110)
    plt.close(fig)
    os.replace(tmp, path)
    return path


def _write_atomic(path: Path, text: str) -> None:
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_text(text, encoding="utf-8")
    os.replace(tmp, path)


def _json_ready(study: dict, analysis: dict) -> dict:
    s = dict(study)
    s["levels"] = [asdict(lv) for lv in study["levels"]]
    return {"study": s, "analysis": analysis}


def write_reports(study: dict, analysis: dict, plot: bool = True) -> dict:
    """Write study.md, study.csv, study-richardson.csv, study.json (and convergence.png) to the study folder."""
    d = Path(study["study_dir"])
    paths = {"markdown": d / "study.md", "csv": d / "study.csv", "richardson_csv": d / "study-richardson.csv",
             "json": d / "study.json"}
    _write_atomic(paths["markdown"], markdown_report(study, analysis))
    _write_atomic(paths["csv"], levels_csv(study, analysis))
    _write_atomic(paths["richardson_csv"], richardson_csv(analysis))
    _write_atomic(paths["json"], json.dumps(_json_ready(study, analysis), indent=2, default=_json_default) + "\n")
    if plot:
        png = plot_study(study, analysis, d / "convergence.png")
        if png is not None:
            paths["plot"] = png
    return paths


def load_study(study_dir) -> dict:
    """A finished study read back from its ``study.json`` (to analyse it again with other tolerances).

    Raises
    ------
    StudyError
        No readable ``study.json`` in the folder; the message names it.
    """
    path = Path(study_dir) / "study.json"
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        study = dict(data["study"])
        study["levels"] = [Level(**lv) for lv in study["levels"]]
    except FileNotFoundError:
        raise StudyError(f"{path}: not found (is {study_dir} a study folder?)") from None
    except (ValueError, KeyError, TypeError) as exc:
        raise StudyError(f"{path}: not a study written by quadfr study ({exc})") from None
    return study


def _json_default(o):
    import numpy as np

    if isinstance(o, (np.generic,)):
        return o.item()
    if isinstance(o, np.ndarray):
        return o.tolist()
    if isinstance(o, Path):
        return str(o)
    raise TypeError(f"not JSON serialisable: {type(o).__name__}")


# ---------------------------------------------------------------------------
# command line
# ---------------------------------------------------------------------------
def add_arguments(p) -> None:
    """The options of ``quadfr study`` on an argparse parser."""
    p.add_argument("case", help="case file (.toml)")
    p.add_argument("--degrees", help="degrees, e.g. 1,2,3,4 or 1-4 (default: the case's degree)")
    p.add_argument("--meshes", help="mesh levels: refinement factors of the case's generator (e.g. 0.5,1,2) "
                                    "or mesh files (a.h5,b.h5,c.h5); default: the case's mesh")
    p.add_argument("--jobs", type=int, default=1, help="levels run at once in worker processes (default 1)")
    p.add_argument("--threads", type=int, help="numba threads per level (default cores // jobs)")
    p.add_argument("--tolerance", help="relative tolerance for the verdict: 0.01, 1%%, or per output "
                                       "St=0.5%%,mean_cd=1%% (default 1 %%)")
    p.add_argument("--outputs", default="auto", help="what to measure: report, vortex-error or auto (default)")
    p.add_argument("--t-from", type=float, dest="t_from", help="start of the averaging window (passed to the outputs)")
    p.add_argument("--max-dof", type=float, dest="max_dof", help="skip levels with more DoF")
    p.add_argument("--cost", default="wall", choices=("wall", "cpu", "work"),
                   help="what 'cheapest' means: wall time (default), CPU time or DoF x RHS evaluations")
    p.add_argument("--out", help="study folder (default runs/<case>-study beside the case file)")
    p.add_argument("--no-plot", action="store_true", help="do not draw convergence.png")
    p.add_argument("--quiet", action="store_true", help="do not show the levels' own progress lines")
    p.add_argument("--reanalyse", action="store_true",
                   help="do not run anything: analyse the finished study in --out (or the default study folder) "
                        "again, e.g. with another --tolerance or --cost, and rewrite its reports")


def main(args, printer=print) -> int:
    """``quadfr study``: returns 0 when every level ran, 1 if a level failed."""
    from solver.case import load_case

    if args.degrees:
        degrees = parse_degrees(args.degrees)
    else:
        degrees = [load_case(args.case).scheme.degree]
    meshes = parse_meshes(args.meshes)
    tol = parse_tolerance(args.tolerance)
    if getattr(args, "reanalyse", False):
        folder = Path(args.out) if args.out else default_study_dir(args.case)
        study = load_study(folder)
    else:
        study = run_study(args.case, degrees, meshes, jobs=args.jobs, threads=args.threads, outputs=args.outputs,
                          t_from=args.t_from, study_dir=args.out, max_dof=args.max_dof, printer=printer,
                          quiet_levels=args.quiet)
    analysis = analyse(study, tol, cost=args.cost)
    paths = write_reports(study, analysis, plot=not args.no_plot)
    printer("")
    printer(markdown_report(study, analysis))
    printer("wrote " + ", ".join(str(p) for p in paths.values()))
    failed = [lv.label for lv in study["levels"] if lv.status == "failed"]
    if failed:
        printer(f"failed levels: {', '.join(failed)}")
    return 1 if failed else 0
