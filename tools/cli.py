"""The ``quadfr`` command.

Subcommands::

    quadfr solve CASE [--resume] [--stop-after N]
                                            run a case file (Ctrl-C writes a checkpoint; exit 130)
    quadfr verify NAME [--quick] [--json F] run a verification check (NAME or 'all')
    quadfr report RUN_DIR [--from T]        force statistics, Strouhal number, plots and report.md of a run
    quadfr bench [--json F] [--quick]       residual throughput benchmark
    quadfr mesh KIND [--param value ...] -o FILE [--png FILE]
                                            build a mesh with a generator, write the native .h5 file
    quadfr meshcheck FILE [--degree p] [--mach M]
                                            quality table of a mesh file (or of a case's mesh)
    quadfr vtu SNAPSHOT_OR_RUN_DIR [-o FILE] ParaView export
    quadfr study CASE --degrees 1,2,3 [--meshes 1,2,4 | a.h5,b.h5] [--jobs N] [--tolerance T]
                                            resolution study: outputs per level, Richardson/GCI, cheapest level
    quadfr estimate CASE [--degree p] [--span L --span-cells N] [--throughput DOF_PER_S ...]
                                            DoF, memory, time step, cost here and of the extruded production run
    quadfr cases                            list the bundled case files

User errors (bad case file, bad mesh, missing file, unknown name, invalid
value) print ``quadfr: error: <message>`` on stderr and exit with status 2,
without a traceback.  A failed check or an invalid mesh exits with 1.
"""
from __future__ import annotations

import argparse
import importlib
import sys
import tomllib
import typing
from pathlib import Path

__all__ = ["main", "build_parser", "explicit_step_line"]

PROG = "quadfr"
ROOT = Path(__file__).resolve().parents[1]

#: where the native mesh writer lives: (module, function)
MESH_WRITER = ("meshing", "write_mesh")


def _user_errors():
    """Exception classes that are the user's mistake: reported in one line, exit 2."""
    from solver.registry import UnknownNameError

    return (ValueError, UnknownNameError, FileNotFoundError, IsADirectoryError, NotADirectoryError,
            PermissionError)


def _message(exc: BaseException) -> str:
    if isinstance(exc, OSError) and exc.filename and exc.strerror:
        return f"{exc.filename}: {exc.strerror}"
    return str(exc)


# ---------------------------------------------------------------------------
# solve
# ---------------------------------------------------------------------------
def cmd_solve(args) -> int:
    from solver.case import load_case

    case = load_case(args.case)  # validated in full before anything runs; run_case prints case.describe()
    from solver.run import run_case

    result = run_case(case, resume=args.resume, stop_after=args.stop_after)
    return 130 if result.get("status") == "interrupted" else 0


# ---------------------------------------------------------------------------
# verify, bench
# ---------------------------------------------------------------------------
def cmd_verify(args) -> int:
    from solver.registry import UnknownNameError, closest
    from tools.verify import CHECKS

    if args.name == "all":
        names = list(CHECKS)
    elif args.name in CHECKS:
        names = [args.name]
    else:
        valid = ", ".join(CHECKS) or "none registered"
        raise UnknownNameError(f"unknown check '{args.name}'{closest(args.name, CHECKS)}; valid: {valid}, all")
    results = {}
    for name in names:
        results[name] = CHECKS[name](args.quick)
    passed = all(bool(r.get("passed")) for r in results.values())
    if len(names) > 1:
        for name, r in results.items():
            print(f"{name:<20} {'PASS' if r.get('passed') else 'FAIL'}")
    if args.json:
        from tools.jsonio import write_json

        write_json(args.json, results[names[0]] if len(names) == 1 else {"passed": passed, "checks": results})
    return 0 if passed else 1


def cmd_report(args) -> int:
    from tools import report

    return report.main(args)


def cmd_study(args) -> int:
    from tools import study

    return study.main(args)


def cmd_estimate(args) -> int:
    from tools import estimate

    return estimate.main(args)


def cmd_bccheck(args) -> int:
    from tools.bccheck import main as bccheck_main

    return bccheck_main(args)


def cmd_bench(args) -> int:
    from tools import bench

    result = bench.main(args)
    return result if isinstance(result, int) and not isinstance(result, bool) else 0


# ---------------------------------------------------------------------------
# mesh: generator parameters become options
# ---------------------------------------------------------------------------
def _generators():
    from solver.case import registry

    return registry("generator")


def _parse_option_value(text: str, ann):
    """An option's text as a TOML value (``4``, ``0.5``, ``true``, ``[0, 2, 0, 1]``), else the raw string.

    For array annotations ``0,2,0,1`` is accepted without brackets.
    """
    origin = typing.get_origin(ann)
    wants_array = origin in (tuple, list)
    src = text.strip()
    if wants_array and not src.startswith("["):
        src = "[" + src + "]"
    try:
        return tomllib.loads(f"v = {src}")["v"]
    except tomllib.TOMLDecodeError:
        return text


def _mesh_parser(kind: str, fn) -> argparse.ArgumentParser:
    import inspect

    from solver.case import annotation_text, generator_parameters, toml_literal

    doc = (inspect.getdoc(fn) or "").split("\n\n")[0]
    p = argparse.ArgumentParser(prog=f"{PROG} mesh {kind}", description=doc)
    p.add_argument("-o", "--output", required=True, metavar="FILE", help="native mesh file to write (.h5)")
    p.add_argument("--png", metavar="FILE", help="also draw the mesh to a PNG (needs matplotlib)")
    for name, prm in generator_parameters(fn).items():
        flags = [f"--{name.replace('_', '-')}"] + ([f"--{name}"] if "_" in name else [])
        req = prm.default is inspect.Parameter.empty
        default = "required" if req else f"default {toml_literal(prm.default)}"
        p.add_argument(*flags, dest=name, required=req, metavar="VALUE", default=inspect.Parameter.empty,
                       help=f"{annotation_text(prm.annotation)} ({default})")
    return p


def cmd_mesh(args) -> int:
    from solver.case import annotation_text, conform, generator_function, generator_parameters

    fn = generator_function(args.kind)
    opts = _mesh_parser(args.kind, fn).parse_args(args.rest)
    if Path(opts.output).suffix.lower() not in (".h5", ".hdf5"):
        raise ValueError(f"mesh {args.kind}: -o {opts.output}: the native mesh file needs the suffix .h5")
    params = generator_parameters(fn)
    given = {}
    for name, prm in params.items():
        text = getattr(opts, name)
        if text is prm.empty:
            continue
        value = _parse_option_value(text, prm.annotation)
        ok, conv = conform(value, prm.annotation)
        if not ok:
            raise ValueError(f"mesh {args.kind}: --{name.replace('_', '-')} must be "
                             f"{annotation_text(prm.annotation)}, got {text!r}")
        given[name] = conv
    try:
        mesh = fn(**given)
    except ValueError as exc:  # the generator's own range checks name the parameter
        raise ValueError(f"mesh {args.kind}: {exc}") from None
    out = Path(opts.output)
    module, attr = MESH_WRITER
    writer = getattr(importlib.import_module(module), attr)
    writer(mesh, out)
    print(mesh.summary())
    print(f"wrote {out}")
    if opts.png:
        try:
            from tools.meshplot import plot_mesh
        except ImportError as exc:
            raise ValueError(f"--png needs tools.meshplot and matplotlib ({exc})") from None
        plot_mesh(mesh, opts.png)
        print(f"wrote {opts.png}")
    return 0


# ---------------------------------------------------------------------------
# meshcheck
# ---------------------------------------------------------------------------
def explicit_step_line(mesh, degree: int | None, mach: float | None) -> str | None:
    """Hook for ``meshcheck``: one line estimating the explicit time step.

    ``degree`` and ``mach`` come from ``--degree`` / ``--mach`` or the case
    file (None when neither gives them).  The estimate is the solver's own
    time-step rule (solver.stepper.ExplicitStepper at CFL fraction 1) for a
    uniform free stream at that Mach number along x, SSP-RK(3,3), dg.
    """
    if degree is None or mach is None:
        return "explicit time step: give --degree and --mach for an estimate"
    from solver.basis import make_basis
    from solver.initial import uniform_state
    from solver.operator import FROperator
    from solver.stepper import ExplicitStepper

    g = 1.4
    ref = dict(rho=1.0, u=1.0, v=0.0, p=1.0 / (g * mach * mach), gamma=g, mach=mach)
    op = FROperator(mesh, make_basis(int(degree)), g, ref=ref,
                    boundaries={t: ("fixed-state", {}) for t in mesh.tags})
    st = ExplicitStepper(op, "ssp-rk33", cfl=1.0)
    dt = st.stable_dt(uniform_state(op.metrics.xy, ref))
    return (f"explicit time step (inviscid, Mach {mach:g}, p = {degree}, ssp-rk33, dg, CFL fraction 1): "
            f"{dt:.4e} (time unit L/U_inf)")


def _load_mesh_for_check(path: Path):
    """A mesh file, or the mesh of a case file (.toml); returns (mesh, degree or None, mach or None)."""
    if path.suffix == ".toml":
        from solver.case import load_case

        case = load_case(path)
        return case.make_mesh(), case.scheme.degree, case.reference_state()["mach"]
    if not path.is_file():
        raise FileNotFoundError(f"mesh file '{path}' not found")
    import meshing

    read = getattr(meshing, "read_mesh", None) or importlib.import_module("meshing.generators").read_mesh
    return read(path), None, None


def cmd_meshcheck(args) -> int:
    from meshing.mesh import MeshError
    from meshing.quality import check_mesh, format_quality, mesh_quality

    mesh, degree, mach = _load_mesh_for_check(Path(args.file))
    degree = args.degree if args.degree is not None else degree
    mach = args.mach if args.mach is not None else mach
    try:
        qd = check_mesh(mesh, degree)
    except MeshError as exc:
        print(format_quality(mesh_quality(mesh, degree)))
        print(f"{PROG}: invalid mesh: {exc}", file=sys.stderr)
        return 1
    print(format_quality(qd))
    line = explicit_step_line(mesh, degree, mach)
    if line:
        print(line)
    print("mesh is valid")
    return 0


# ---------------------------------------------------------------------------
# vtu, cases
# ---------------------------------------------------------------------------
def cmd_vtu(args) -> int:
    from tools.vtu import export

    out = export(args.path, args.output)
    print(f"wrote {out}")
    return 0


def cmd_cases(args) -> int:
    folder = Path(args.dir) if args.dir else ROOT / "cases"
    if not folder.is_dir():
        raise FileNotFoundError(f"case folder '{folder}' not found")
    files = sorted(folder.glob("*.toml"))
    if not files:
        print(f"no case files in {folder}")
    w = max((len(f.name) for f in files), default=0)
    for f in files:
        try:
            title = tomllib.loads(f.read_text(encoding="utf-8")).get("title", "")
        except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
            title = f"(unreadable: {exc})"
        print(f"{f.name:<{w}}  {title}")
    return 0


# ---------------------------------------------------------------------------
# parser and entry point
# ---------------------------------------------------------------------------
def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog=PROG, description="2D compressible flux reconstruction solver")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    s = sub.add_parser("solve", help="run a case file")
    s.add_argument("case", help="case file (.toml)")
    s.add_argument("--resume", action="store_true", help="continue from the latest snapshot of the run folder")
    s.add_argument("--stop-after", type=int, metavar="N",
                   help="stop after N steps of this session and write a checkpoint (continue with --resume)")
    s.set_defaults(func=cmd_solve)

    s = sub.add_parser("verify", help="run a verification check")
    s.add_argument("name", help="check name, or 'all'")
    s.add_argument("--quick", action="store_true", help="smaller, faster version")
    s.add_argument("--json", metavar="FILE", help="write the results as JSON")
    s.set_defaults(func=cmd_verify)

    s = sub.add_parser("report", help="force statistics, Strouhal number and plots of a run folder")
    s.add_argument("run_dir", help="run folder (holds history.h5 and the snapshots)")
    s.add_argument("--from", dest="t_from", type=float, metavar="T",
                   help="start of the analysis window (default: when the lift cycles have settled)")
    s.add_argument("--group", default="total", help="force group: total (default) or a wall tag")
    s.add_argument("--no-plots", action="store_true", help="write no PNG files")
    s.set_defaults(func=cmd_report)

    s = sub.add_parser("bccheck", help="reflection test of open-boundary setups (pulse and vortex)")
    s.add_argument("setups", nargs="*", help="setup names (default: all)")
    s.add_argument("--quick", action="store_true", help="short form (as in CI)")
    s.add_argument("--json", metavar="FILE", help="write the table as JSON")
    s.set_defaults(func=cmd_bccheck)

    s = sub.add_parser("bench", help="residual throughput benchmark")
    s.add_argument("--json", metavar="FILE", help="write the results as JSON")
    s.add_argument("--quick", action="store_true", help="smaller, faster version")
    s.set_defaults(func=cmd_bench)

    s = sub.add_parser("mesh", help="build a mesh with a generator (quadfr mesh KIND --help lists its options)",
                       add_help=True)
    s.add_argument("kind", help="generator name")
    s.add_argument("rest", nargs=argparse.REMAINDER, help="generator options, -o FILE, --png FILE")
    s.set_defaults(func=cmd_mesh)

    s = sub.add_parser("meshcheck", help="mesh quality table; exit 1 on an invalid mesh")
    s.add_argument("file", help="mesh file, or a case file (.toml) whose mesh is checked")
    s.add_argument("--degree", type=int, help="solution degree p (for the time-step estimate)")
    s.add_argument("--mach", type=float, help="free-stream Mach number (for the time-step estimate)")
    s.set_defaults(func=cmd_meshcheck)

    s = sub.add_parser("vtu", help="ParaView export of a snapshot or of a whole run folder")
    s.add_argument("path", help="snapshot (.h5) or run folder")
    s.add_argument("-o", "--output", metavar="FILE", help="output .vtu (snapshot) or .pvd (run folder)")
    s.set_defaults(func=cmd_vtu)

    s = sub.add_parser("study", help="resolution study: run a case at several degrees and meshes, tabulate outputs")
    from tools.study import add_arguments as _study_arguments
    _study_arguments(s)
    s.set_defaults(func=cmd_study)

    s = sub.add_parser("estimate", help="DoF, memory, time step and cost of a case and of its production run")
    from tools.estimate import add_arguments as _estimate_arguments
    _estimate_arguments(s)
    s.set_defaults(func=cmd_estimate)

    s = sub.add_parser("cases", help="list the bundled case files")
    s.add_argument("--dir", help=argparse.SUPPRESS)
    s.set_defaults(func=cmd_cases)
    return p


def main(argv=None) -> int:
    """Entry point of ``quadfr``; returns the exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args))
    except _user_errors() as exc:
        print(f"{PROG}: error: {_message(exc)}", file=sys.stderr)
        return 2
    except FloatingPointError as exc:  # a run that blew up: the solver's message, not a traceback
        print(f"{PROG}: error: {exc}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print(f"{PROG}: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
