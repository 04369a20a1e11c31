"""Case files: one TOML file describes one run.

A case file has the sections ``[gas]``, ``[flow]``, ``[mesh]``, ``[scheme]``,
``[time]``, ``[boundaries]``, ``[initial]``, ``[output]``, ``[monitor]`` and
the optional ``[kick]``, plus an optional top-level ``title``.  :func:`load_case` reads and validates *all* of it before
anything runs or is written; every error is a :class:`CaseError` whose message
names the file, the section and the key.

The schema is declarative: :data:`SCHEMA` maps each section to a table
``key -> Key(kind, default, help, range/choices)``.  Adding a key is one line
there, and the README reference table is generated from it by
:func:`case_reference_markdown`.  Two sections depend on other registries and
are checked against them: ``[mesh]`` (the parameters of the chosen generator,
read from its signature) and ``[boundaries]`` (the condition types and their
parameters).  The names of those registries are looked up lazily, so this
module imports before the solver pieces exist.

Non-dimensionalisation (see :meth:`Case.reference_state`): free-stream
density 1, free-stream speed 1, reference length 1 mesh unit, so
``p_inf = 1 / (gamma M^2)``, ``T_inf = 1`` and the time unit is
``L / U_inf``.
"""
from __future__ import annotations

import dataclasses
import importlib
import inspect
import math
import tomllib
import types
import typing
from dataclasses import dataclass, field, make_dataclass
from pathlib import Path
from typing import Any

from .registry import UnknownNameError, closest

__all__ = [
    "CaseError",
    "Case",
    "Key",
    "MeshSpec",
    "BoundarySpec",
    "SCHEMA",
    "REGISTRIES",
    "load_case",
    "reference_from_text",
    "reference_state",
    "case_reference_markdown",
    "sutherland_viscosity",
]


class CaseError(ValueError):
    """A case file is invalid; the message names the file, section and key."""


# ---------------------------------------------------------------------------
# declarative schema
# ---------------------------------------------------------------------------
class _Required:
    def __repr__(self) -> str:
        return "required"


#: default of a key that must be given
REQUIRED = _Required()


@dataclass(frozen=True)
class Key:
    """One key of a case-file section.

    Attributes
    ----------
    kind : str
        ``number``, ``integer``, ``string``, ``bool``, ``choice``, ``vector``
        (array of ``length`` numbers), ``name`` (a name in a registry) or
        ``name-or-number``.
    default : Any
        Filled in when the key is absent; ``None`` means "absent is allowed
        and means: not given" (other rules of the section decide);
        :data:`REQUIRED` means the key must be given.
    help : str
        One line for the reference table.
    lo, hi : float or None
        Range; ``lo_open`` / ``hi_open`` make the bound strict.
    choices : tuple of str
        Allowed values of a ``choice``.
    registry : str
        For ``name`` kinds: the key of :data:`REGISTRIES` holding valid names.
    length : int
        For ``vector``.
    """

    kind: str
    default: Any
    help: str
    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    hi_open: bool = False
    choices: tuple = ()
    registry: str = ""
    length: int = 0

    def what(self) -> str:
        """What the key accepts, for error messages: ``an integer 1..8``."""
        if self.kind == "integer":
            return "an integer" + _range_text(self, integer=True)
        if self.kind == "number":
            return "a number" + _range_text(self, integer=False)
        if self.kind == "choice":
            return "one of " + ", ".join(f"'{c}'" for c in self.choices)
        if self.kind == "vector":
            return f"an array of {self.length} numbers"
        if self.kind == "points":
            return "an array of [x, y] points"
        if self.kind == "strings":
            return "an array of names (strings)"
        if self.kind == "bool":
            return "true or false"
        if self.kind == "name":
            return "a name (string)"
        if self.kind == "name-or-number":
            return "a name (string) or a number"
        return "a string"


def _range_text(k: Key, integer: bool) -> str:
    lo, hi = k.lo, k.hi
    fmt = (lambda x: f"{int(x)}") if integer else (lambda x: f"{x:g}")
    if lo is None and hi is None:
        return ""
    if integer and lo is not None and hi is not None and not k.lo_open and not k.hi_open:
        return f" {fmt(lo)}..{fmt(hi)}"
    if lo is not None and hi is not None:
        return f" in {'(' if k.lo_open else '['}{fmt(lo)}, {fmt(hi)}{')' if k.hi_open else ']'}"
    if lo is not None:
        return f" {'>' if k.lo_open else '>='} {fmt(lo)}"
    return f" {'<' if k.hi_open else '<='} {fmt(hi)}"


def _num(default, help, lo=None, hi=None, lo_open=False, hi_open=False):
    return Key("number", default, help, lo, hi, lo_open, hi_open)


def _int(default, help, lo=None, hi=None):
    return Key("integer", default, help, lo, hi)


#: where the registries that validate names live: key -> (module, attribute)
REGISTRIES = {
    "points": ("solver.basis", "POINT_SETS"),
    "correction": ("solver.corrections", "CORRECTIONS"),
    "flux": ("solver.fluxes", "INTERFACE_FLUXES"),
    "viscous": ("solver.operator", "VISCOUS_SCHEMES"),
    "time": ("solver.timeschemes", "TIME_SCHEMES"),
    "stepping": ("solver.dualtime", "TIME_STEPPING"),  # explicit RK names + BDF (dual time) names
    "boundary": ("solver.boundaries", "BOUNDARY_CONDITIONS"),
    "generator": ("meshing.generators", "GENERATORS"),
}

# Sutherland's law constants for air: mu_ref = 1.716e-5 Pa s at T_ref = 273.15 K,
# S = 110.4 K (White, Viscous Fluid Flow, 3rd ed. 2006, Table 1-2 / Eq. 1-36).
SCHEMA: dict[str, dict[str, Key]] = {
    "gas": {
        "gamma": _num(1.4, "ratio of specific heats", lo=1.0, lo_open=True),
        "prandtl": _num(0.72, "Prandtl number", lo=0.0, lo_open=True),
        "viscosity": Key("choice", "constant", "viscosity law: constant, or Sutherland's law in temperature",
                         choices=("constant", "sutherland")),
        "sutherland_ref_temperature": _num(273.15, "Sutherland reference temperature T_ref (K)", lo=0.0,
                                           lo_open=True),
        "sutherland_ref_viscosity": _num(1.716e-5, "viscosity at T_ref (Pa s); used by the SI form only",
                                         lo=0.0, lo_open=True),
        "sutherland_constant": _num(110.4, "Sutherland constant S (K)", lo=0.0, lo_open=True),
    },
    "flow": {
        "mach": _num(None, "free-stream Mach number (required unless the SI form is used)", lo=0.0, lo_open=True),
        "angle": _num(0.0, "flow angle from the x axis (degrees)"),
        "reynolds": _num(None, "Reynolds number based on `length`; absent: inviscid (Euler)", lo=0.0,
                         lo_open=True),
        "temperature": _num(288.15, "free-stream temperature (K); for Sutherland's law and the SI form",
                            lo=0.0, lo_open=True),
        "length": _num(1.0, "reference length of the Reynolds number, in mesh units (metres in the SI form)",
                       lo=0.0, lo_open=True),
        "velocity": _num(None, "SI form: free-stream speed (m/s); Mach and Reynolds are then derived",
                         lo=0.0, lo_open=True),
        "pressure": _num(None, "SI form: free-stream pressure (Pa)", lo=0.0, lo_open=True),
        "gas_constant": _num(287.05, "SI form: specific gas constant (J/(kg K))", lo=0.0, lo_open=True),
    },
    "mesh": {
        "generator": Key("name", None, "name of a mesh generator; its parameters are further keys of [mesh]",
                         registry="generator"),
        "file": Key("string", None, "mesh file, relative to the case file's folder"),
    },
    "scheme": {
        "degree": _int(3, "solution polynomial degree p", 1, 8),
        "points": Key("name", "gauss-legendre", "solution point set", registry="points"),
        "correction": Key("name-or-number", "dg", "correction function (name, or a number)",
                          registry="correction"),
        "flux": Key("name", "roe", "interface (Riemann) flux", registry="flux"),
        "viscous": Key("name", "ldg", "common values of the viscous terms on interior faces (boundary faces "
                                      "always use the BR2 lifting)", registry="viscous"),
    },
    "time": {
        "scheme": Key("name", "ssp-rk33", "time integration scheme: explicit RK, or bdf1/bdf2/bdf3 for dual time "
                                          "stepping (then `dt` is required and [pseudo] sets the inner iteration)",
                      registry="stepping"),
        "cfl": _num(0.9, "fraction of the scheme's stable time step (ignored when dt is given)", lo=0.0, hi=1.0,
                    lo_open=True),
        "dt": _num(None, "fixed time step (instead of cfl)", lo=0.0, lo_open=True),
        "end": _num(None, "final simulation time (exactly one of end / steps)", lo=0.0, lo_open=True),
        "steps": _int(None, "number of time steps (exactly one of end / steps)", 1),
        "progress_every": _int(100, "steps between progress lines", 1),
    },
    "pseudo": {  # inner iteration of dual time stepping (solver/dualtime.py); only with a bdf [time] scheme
        "smoother": Key("name", "ssp-rk33", "explicit RK scheme of the pseudo-time iteration (on every level)",
                        registry="time"),
        "cfl": _num(0.9, "fraction of the smoother's stable local (per element) pseudo-time step", lo=0.0, hi=1.0,
                    lo_open=True),
        "tolerance": _num(1e-5, "converged when the RMS unsteady residual (each variable divided by its "
                                "free-stream value; units 1/time) is at most this", lo=0.0, lo_open=True),
        "drop": _num(None, "also converged when the residual has fallen by this factor from its value at the "
                           "start of the step (e.g. 1e-3); absent: tolerance only", lo=0.0, hi=1.0, lo_open=True,
                     hi_open=True),
        "min_iterations": _int(1, "fewest inner iterations (RK steps or multigrid cycles) per physical step", 0),
        "max_iterations": _int(200, "most inner iterations per physical step; a step that reaches it without "
                                    "converging is kept and reported", 1),
        "predictor": Key("choice", "linear", "starting guess: previous (U^n) or linear (extrapolated from "
                                             "U^(n-1) and U^n)", choices=("previous", "linear")),
        "multigrid": Key("bool", True, "p-multigrid cycles over the degrees p, p-1, ..., coarsest"),
        "coarsest": _int(1, "lowest degree of the multigrid cycle", 1, 8),
        "cycle": Key("choice", "v", "multigrid cycle shape: v or w", choices=("v", "w")),
        "pre_smooth": _int(1, "smoothing sweeps before the coarse-grid correction on each level", 0),
        "post_smooth": _int(1, "smoothing sweeps after the coarse-grid correction on each level", 0),
        "coarse_smooth": _int(2, "smoothing sweeps on the coarsest level", 1),
    },
    "boundaries": {},  # mesh tag -> condition; validated against the boundary registry
    "initial": {
        "kind": Key("choice", "uniform", "initial state: the free stream, free stream plus a vortex, or the "
                                         "state of an earlier run's snapshot", choices=("uniform", "vortex", "snapshot")),
        "strength": _num(5.0, "vortex: strength beta of the isentropic vortex (Yee, Sandham & Djomehri 1999)"),
        "radius": _num(1.0, "vortex: radius (mesh units)", lo=0.0, lo_open=True),
        "center": Key("vector", [0.0, 0.0], "vortex: centre (x, y)", length=2),
        "file": Key("string", None, "snapshot: snapshot file of an earlier run on the same mesh, relative to the "
                                    "case file's folder; the run starts at its time (another degree, scheme or time "
                                    "integration is allowed: the state is carried over through the modal basis)"),
    },
    "output": {
        "directory": Key("string", None, "run folder, relative to the case file's folder; "
                                         "default `runs/<case file stem>`"),
        "snapshot_every": _num(0.0, "simulation time between snapshots; 0: only the final state", lo=0.0),
        "history_every": _int(10, "steps between history records (forces, probes, residuals, bounds)", 1),
        "history_interval": _num(0.0, "simulation time between history records instead of `history_every`; "
                                      "0: use `history_every`", lo=0.0),
        "checkpoint_minutes": _num(10.0, "wall-clock minutes between extra checkpoint snapshots; 0: none",
                                   lo=0.0),
    },
    "monitor": {
        "walls": Key("strings", None, "wall tags whose forces are recorded; default: every tag with a wall "
                                      "condition (slip-wall, noslip-wall, isothermal-wall)"),
        "length": _num(None, "reference length of the force coefficients (mesh units); default: [flow] length",
                       lo=0.0, lo_open=True),
        "moment_point": Key("vector", [0.0, 0.0], "point about which the moment is taken (x, y)", length=2),
        "probes": Key("points", [], "points where rho, u, v, p are recorded (evaluated from the solution "
                                    "polynomial)"),
        "average_from": _num(None, "simulation time from which running time averages of rho, u, v, p (and of "
                                   "their squares) are accumulated and stored in snapshots; absent: none",
                             lo=0.0),
    },
    "sponge": {
        "tags": Key("strings", REQUIRED, "boundary tags the absorbing zone lies along"),
        "width": _num(REQUIRED, "zone width (mesh units), measured from those boundaries", lo=0.0, lo_open=True),
        "strength": _num(5.0, "damping rate sigma at the boundary (1 / time unit)", lo=0.0),
        "exponent": _num(3.0, "ramp sigma = strength s^exponent, s = 1 - distance / width", lo=1.0),
    },
    "kick": {
        "tags": Key("strings", None, "wall tags that move; default: every noslip-wall and isothermal-wall tag"),
        "speed": _num(REQUIRED, "peak tangential wall speed of the kick (units of U_inf), added to the "
                                "condition's own `speed`; positive is clockwise around a body"),
        "start": _num(0.0, "simulation time at which the kick starts", lo=0.0),
        "duration": _num(REQUIRED, "length of the kick (simulation time)", lo=0.0, lo_open=True),
    },
}

#: keys of [initial] that only a vortex takes
_VORTEX_KEYS = ("strength", "radius", "center")
#: keys of [flow] that belong to one form only
_SI_ONLY = ("velocity", "pressure", "gas_constant")
_NONDIM_ONLY = ("mach", "reynolds")

SECTION_HELP = {
    "gas": "thermodynamic and transport properties",
    "flow": "free stream: either dimensionless (mach, reynolds) or SI (velocity, temperature, pressure, length)",
    "mesh": "exactly one of `generator` (plus that generator's parameters) or `file`",
    "scheme": "spatial discretisation",
    "time": "time integration",
    "pseudo": "inner (pseudo-time) iteration of dual time stepping; only with a bdf [time] scheme",
    "boundaries": "one entry per mesh boundary tag: `tag = \"type\"` or `tag = { type = \"type\", param = value }`",
    "initial": "initial state",
    "output": "where and how often results are written",
    "monitor": "what the history records: wall forces, probes, running averages",
    "sponge": "optional, repeatable ([[sponge]]): an absorbing zone next to boundaries that damps the solution "
              "towards the free stream with a smooth ramp",
    "kick": "optional: a brief tangential motion of walls that breaks the symmetry of a start (e.g. to trigger "
            "vortex shedding); the speed follows `speed sin^2(pi (t - start) / duration)` during the kick",
}


def _section_class(name: str):
    fields = [(k, Any, field(default=None)) for k in SCHEMA[name]]
    cls = make_dataclass(f"{name.capitalize()}Section", fields, frozen=True)
    cls.__doc__ = f"[{name}] of a case file: {SECTION_HELP[name]}."
    return cls


GasSection = _section_class("gas")
FlowSection = _section_class("flow")
SchemeSection = _section_class("scheme")
TimeSection = _section_class("time")
InitialSection = _section_class("initial")
OutputSection = _section_class("output")
MonitorSection = _section_class("monitor")
KickSection = _section_class("kick")
SpongeSection = _section_class("sponge")


@dataclass(frozen=True)
class MeshSpec:
    """[mesh]: a generator and its keyword parameters, or a mesh file (absolute path)."""

    generator: str | None = None
    params: dict = field(default_factory=dict)
    file: Path | None = None


@dataclass(frozen=True)
class BoundarySpec:
    """One [boundaries] entry: condition type and the parameters the user gave."""

    type: str
    params: dict = field(default_factory=dict)


# ---------------------------------------------------------------------------
# value checks
# ---------------------------------------------------------------------------
def _is_number(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def _in_range(k: Key, v) -> bool:
    if k.lo is not None and (v <= k.lo if k.lo_open else v < k.lo):
        return False
    if k.hi is not None and (v >= k.hi if k.hi_open else v > k.hi):
        return False
    return True


def registry(which: str):
    """The registry named by ``which`` (a key of :data:`REGISTRIES`), imported now."""
    module, attr = REGISTRIES[which]
    return getattr(importlib.import_module(module), attr)


def _names(reg) -> list[str]:
    return list(reg.names()) if hasattr(reg, "names") else list(reg)


def _check_name(reg, value: str) -> None:
    """Raise UnknownNameError (message lists the valid names) if ``value`` is not in ``reg``."""
    if hasattr(reg, "names"):
        reg[value]  # Registry raises a listing error
        return
    if value not in reg:
        valid = list(reg)
        raise UnknownNameError(f"unknown name '{value}'{closest(value, valid)}; valid: {', '.join(valid)}")


class _Ctx:
    """Error-message prefix builder for one file."""

    def __init__(self, fname: str):
        self.fname = fname

    def err(self, section: str | None, msg: str) -> CaseError:
        return CaseError(f"{self.fname}: [{section}] {msg}" if section else f"{self.fname}: {msg}")


def _check_value(ctx: _Ctx, section: str, key: str, k: Key, v):
    """Validate and normalise one value; returns the stored value."""
    bad = ctx.err(section, f"{key} must be {k.what()}, got {v!r}")
    if k.kind == "integer":
        if not isinstance(v, int) or isinstance(v, bool) or not _in_range(k, v):
            raise bad
        return int(v)
    if k.kind == "number":
        if not _is_number(v) or not _in_range(k, v):
            raise bad
        return float(v)
    if k.kind == "bool":
        if not isinstance(v, bool):
            raise bad
        return v
    if k.kind == "choice":
        if v not in k.choices:
            raise ctx.err(section, f"{key} must be {k.what()}, got {v!r}{closest(str(v), k.choices)}")
        return v
    if k.kind == "vector":
        if not isinstance(v, list) or len(v) != k.length or not all(_is_number(x) for x in v):
            raise bad
        return [float(x) for x in v]
    if k.kind == "points":
        if not isinstance(v, list) or not all(isinstance(x, list) and len(x) == 2 and all(_is_number(c) for c in x)
                                              for x in v):
            raise bad
        return [[float(c) for c in x] for x in v]
    if k.kind == "strings":
        if not isinstance(v, list) or not v or not all(isinstance(x, str) and x for x in v):
            raise bad
        if len(set(v)) != len(v):
            raise ctx.err(section, f"{key} lists a name twice: {v!r}")
        return list(v)
    if k.kind == "string":
        if not isinstance(v, str) or not v:
            raise bad
        return v
    if k.kind in ("name", "name-or-number"):
        if k.kind == "name-or-number" and _is_number(v):
            return float(v)
        if not isinstance(v, str):
            raise bad
        try:
            _check_name(registry(k.registry), v)
        except UnknownNameError as exc:
            raise ctx.err(section, f"{key}: {exc}") from None
        return v
    raise AssertionError(f"unknown key kind {k.kind}")


def _check_unknown(ctx: _Ctx, section: str, table: dict, valid: list[str], note: str = "") -> None:
    for key in table:
        if key not in valid:
            raise ctx.err(section, f"unknown key '{key}'{closest(key, valid)}; valid keys{note}: "
                                   f"{', '.join(valid)}")


def _section_values(ctx: _Ctx, section: str, table: dict) -> dict:
    """Check a plain section against :data:`SCHEMA`; returns values with defaults filled in."""
    schema = SCHEMA[section]
    _check_unknown(ctx, section, table, list(schema))
    out = {}
    for key, k in schema.items():
        if key in table:
            out[key] = _check_value(ctx, section, key, k, table[key])
        elif k.default is REQUIRED:
            raise ctx.err(section, f"{key} is required ({k.what()}): {k.help}")
        else:
            out[key] = list(k.default) if isinstance(k.default, list) else k.default
    return out


# ---------------------------------------------------------------------------
# generator signatures -> [mesh] keys
# ---------------------------------------------------------------------------
def _union_args(ann):
    origin = typing.get_origin(ann)
    if origin is typing.Union or origin is types.UnionType:
        return [a for a in typing.get_args(ann) if a is not type(None)]
    return None


def annotation_text(ann) -> str:
    """What a parameter annotation accepts, in words (``an integer``, ``an array of 2 numbers``)."""
    if ann is inspect.Parameter.empty or ann is Any:
        return "any value"
    u = _union_args(ann)
    if u is not None:
        return " or ".join(annotation_text(a) for a in u)
    origin, args = typing.get_origin(ann), typing.get_args(ann)
    if origin is typing.Literal:
        return "one of " + ", ".join(repr(a) for a in args)
    if origin in (tuple, list):
        if origin is tuple and args and args[-1] is not Ellipsis:
            if len(set(args)) == 1:
                return f"an array of {len(args)} {_plural(args[0])}"
            return "an array of (" + ", ".join(annotation_text(a) for a in args) + ")"
        return f"an array of {_plural(args[0])}" if args else "an array"
    return {int: "an integer", float: "a number", bool: "true or false", str: "a string"}.get(ann, str(ann))


def _plural(ann) -> str:
    named = {int: "integers", float: "numbers", bool: "booleans", str: "strings"}
    if ann in named:
        return named[ann]
    t = annotation_text(ann)
    return "arrays" + t[len("an array"):] if t.startswith("an array") else t


def toml_literal(v) -> str:
    """A Python default written the way a case file spells it (``true``, ``"0012"``, ``[0.0, 1.0]``)."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(toml_literal(x) for x in v) + "]"
    if isinstance(v, float):
        return repr(v)
    return str(v)


def conform(value, ann):
    """Return ``(ok, converted)`` for a TOML value against a parameter annotation."""
    if ann is inspect.Parameter.empty or ann is Any:
        return True, value
    u = _union_args(ann)
    if u is not None:
        for a in u:
            ok, conv = conform(value, a)
            if ok:
                return True, conv
        return False, None
    origin, args = typing.get_origin(ann), typing.get_args(ann)
    if origin is typing.Literal:
        return (value in args), value
    if origin in (tuple, list):
        if not isinstance(value, list):
            return False, None
        if origin is tuple and args and args[-1] is not Ellipsis:
            if len(value) != len(args):
                return False, None
            elem = list(args)
        else:
            elem = [args[0] if args else Any] * len(value)
        conv = []
        for x, a in zip(value, elem):
            ok, c = conform(x, a)
            if not ok:
                return False, None
            conv.append(c)
        return True, (tuple(conv) if origin is tuple else conv)
    if ann is bool:
        return isinstance(value, bool), value
    if ann is int:
        return (isinstance(value, int) and not isinstance(value, bool)), value
    if ann is float:
        return _is_number(value), (float(value) if _is_number(value) else None)
    if ann is str:
        return isinstance(value, str), value
    if isinstance(ann, type):
        return isinstance(value, ann), value
    return True, value


def generator_function(name: str):
    """The callable registered as mesh generator ``name`` (UnknownNameError lists the valid ones)."""
    gens = registry("generator")
    if hasattr(gens, "names"):  # a Registry whose entries hold the function in .obj
        return gens[name].obj
    if name not in gens:
        valid = list(gens)
        raise UnknownNameError(f"unknown mesh generator '{name}'{closest(name, valid)}; valid: {', '.join(valid)}")
    return gens[name]


def generator_parameters(fn) -> dict[str, inspect.Parameter]:
    """Keyword parameters of a generator with resolved annotations (name -> Parameter)."""
    sig = inspect.signature(fn)
    try:
        hints = typing.get_type_hints(fn)
    except Exception:  # unresolvable string annotations: fall back to what the signature holds
        hints = {}
    out = {}
    for name, p in sig.parameters.items():
        if p.kind in (p.VAR_POSITIONAL, p.VAR_KEYWORD):
            continue
        out[name] = p.replace(annotation=hints.get(name, p.annotation))
    return out


def is_file_parameter(name: str) -> bool:
    """Generator parameters named ``path``, ``file``, ``*_path`` or ``*_file`` are file names.

    In a case file they are relative to the case file's folder and must exist.
    """
    return name in ("path", "file") or name.endswith(("_path", "_file"))


def _mesh_spec(ctx: _Ctx, table: dict, base: Path) -> MeshSpec:
    has_gen, has_file = "generator" in table, "file" in table
    if has_gen == has_file:
        raise ctx.err("mesh", "needs exactly one of 'generator' or 'file'"
                              + (", not both" if has_gen else ""))
    if has_file:
        _check_unknown(ctx, "mesh", table, ["file"], note=" with file")
        name = _check_value(ctx, "mesh", "file", SCHEMA["mesh"]["file"], table["file"])
        path = (base / name).resolve()
        if not path.is_file():
            raise ctx.err("mesh", f"file: mesh file '{path}' not found")
        return MeshSpec(file=path)
    gname = table["generator"]
    if not isinstance(gname, str):
        raise ctx.err("mesh", f"generator must be a name (string), got {gname!r}")
    try:
        fn = generator_function(gname)
    except UnknownNameError as exc:
        raise ctx.err("mesh", f"generator: {exc}") from None
    params = generator_parameters(fn)
    _check_unknown(ctx, "mesh", table, ["generator", *params], note=f" for generator '{gname}'")
    given = {}
    for key, p in params.items():
        if key not in table:
            if p.default is inspect.Parameter.empty:
                raise ctx.err("mesh", f"generator '{gname}' needs key '{key}' ({annotation_text(p.annotation)})")
            continue
        ok, conv = conform(table[key], p.annotation)
        if not ok:
            raise ctx.err("mesh", f"{key} must be {annotation_text(p.annotation)}, got {table[key]!r} "
                                  f"(generator '{gname}')")
        if is_file_parameter(key) and isinstance(conv, str) and conv:
            f = (base / conv).resolve()
            if not f.is_file():
                raise ctx.err("mesh", f"{key}: file '{f}' not found (generator '{gname}')")
            conv = str(f)
        given[key] = conv
    return MeshSpec(generator=gname, params=given)


# ---------------------------------------------------------------------------
# boundaries
# ---------------------------------------------------------------------------
def _boundary_specs(ctx: _Ctx, table: dict, reference: dict) -> dict[str, BoundarySpec]:
    bcs = registry("boundary")
    out = {}
    for tag, v in table.items():
        if isinstance(v, str):
            name, params = v, {}
        elif isinstance(v, dict):
            if "type" not in v:
                raise ctx.err("boundaries", f"{tag}: the table needs 'type' (one of {', '.join(_names(bcs))})")
            name, params = v["type"], {k: x for k, x in v.items() if k != "type"}
        else:
            raise ctx.err("boundaries", f"{tag} must be a condition type (string) or a table "
                                        f"{{ type = \"...\", ... }}, got {v!r}")
        if not isinstance(name, str) or name not in bcs:
            valid = _names(bcs)
            raise ctx.err("boundaries", f"{tag}: unknown boundary type {name!r}{closest(str(name), valid)}; "
                                        f"valid types: {', '.join(valid)}")
        entry = bcs[name]
        for k, x in params.items():
            if k not in entry.params:
                raise ctx.err("boundaries", f"{tag}: unknown key '{k}' for type '{name}'{closest(k, entry.params)};"
                                            f" its parameters: {', '.join(entry.params) or 'none'}")
            if not _is_number(x):
                raise ctx.err("boundaries", f"{tag}: {k} must be a number, got {x!r}")
        params = {k: float(x) for k, x in params.items()}
        try:  # value checks owned by the boundary module, when it offers them
            mod = importlib.import_module(REGISTRIES["boundary"][0])
            if hasattr(mod, "boundary_parameters"):
                mod.boundary_parameters(name, params, reference)
        except ValueError as exc:
            raise ctx.err("boundaries", f"{tag}: {exc}") from None
        out[tag] = BoundarySpec(name, params)
    return out


# ---------------------------------------------------------------------------
# flow: the two forms and the reference state
# ---------------------------------------------------------------------------
def sutherland_viscosity(T: float, mu_ref: float = 1.716e-5, T_ref: float = 273.15, S: float = 110.4) -> float:
    """Sutherland's law ``mu = mu_ref (T/T_ref)^1.5 (T_ref + S) / (T + S)`` (Pa s).

    Notes
    -----
    Constants for air from White, Viscous Fluid Flow (3rd ed., 2006), Eq. 1-36 / Table 1-2.
    """
    return mu_ref * (T / T_ref) ** 1.5 * (T_ref + S) / (T + S)


def _check_flow(ctx: _Ctx, given: dict) -> None:
    si = "velocity" in given
    if si:
        for k in _NONDIM_ONLY:
            if k in given:
                raise ctx.err("flow", f"{k} cannot be combined with velocity: the SI form (velocity, temperature, "
                                      f"pressure, length) derives Mach and Reynolds")
        if "pressure" not in given:
            raise ctx.err("flow", "pressure is required in the SI form (with velocity)")
    else:
        for k in _SI_ONLY:
            if k in given:
                raise ctx.err("flow", f"{k} belongs to the SI form, which needs velocity (and then no mach)")
        if "mach" not in given:
            raise ctx.err("flow", "mach is required (a number > 0), or give the SI form: velocity, temperature, "
                                  "pressure, length")


def reference_state(gas, flow) -> dict:
    """Free-stream state in solver units from the [gas] and [flow] sections.

    Returns
    -------
    dict
        ``gamma, mach, angle_rad, rho (=1), u, v, p (=1/(gamma M^2)), E, c (=1/M), T (=1), reynolds
        (None: inviscid), mu (=length/reynolds, None: inviscid), prandtl, viscosity, sutherland_ratio
        (S / T_inf), temperature (K), length, si``; in the SI form also ``velocity_si, pressure_si,
        density_si, viscosity_si, sound_speed_si, gas_constant``.

    Notes
    -----
    Units: rho_inf = 1, |u_inf| = 1, one mesh unit = 1, so p_inf = 1/(gamma M^2) and the
    dimensionless viscosity is mu = L/Re with L the reference length in mesh units.
    Sutherland's law in these units: mu(T)/mu_inf = T^1.5 (1 + S') / (T + S') with
    T = T/T_inf and S' = S/T_inf.  SI form: a = sqrt(gamma R T), M = U/a, rho = p/(R T),
    mu = Sutherland(T), Re = rho U L / mu (mesh units are then metres).
    """
    g = gas.gamma
    out: dict[str, Any] = {"si": flow.velocity is not None}
    if out["si"]:
        R, T, U, P, L = flow.gas_constant, flow.temperature, flow.velocity, flow.pressure, flow.length
        a = math.sqrt(g * R * T)
        rho = P / (R * T)
        mu_si = sutherland_viscosity(T, gas.sutherland_ref_viscosity, gas.sutherland_ref_temperature,
                                     gas.sutherland_constant)
        mach, reynolds = U / a, rho * U * L / mu_si
        out.update(velocity_si=U, pressure_si=P, density_si=rho, viscosity_si=mu_si, sound_speed_si=a,
                   gas_constant=R)
    else:
        mach, reynolds = flow.mach, flow.reynolds
    ang = math.radians(flow.angle)
    p = 1.0 / (g * mach * mach)
    out.update(
        gamma=g, mach=mach, angle_rad=ang, rho=1.0, u=math.cos(ang), v=math.sin(ang), p=p,
        E=p / (g - 1.0) + 0.5, c=1.0 / mach, T=1.0, reynolds=reynolds,
        mu=None if reynolds is None else flow.length / reynolds, prandtl=gas.prandtl, viscosity=gas.viscosity,
        sutherland_ratio=gas.sutherland_constant / flow.temperature, temperature=flow.temperature,
        length=flow.length,
    )
    return out


# ---------------------------------------------------------------------------
# the case
# ---------------------------------------------------------------------------
@dataclass
class Case:
    """A validated case file.

    Attributes
    ----------
    path : Path
        The case file (absolute).
    text : str
        Its raw text (stored in every snapshot).
    title : str
    gas, flow, scheme, time, initial, output, monitor : section dataclasses
        Every key of :data:`SCHEMA` with defaults filled in (``None``: not given).
    kick : section dataclass or None
        ``None`` when the case has no [kick].
    mesh : MeshSpec
    boundaries : dict tag -> BoundarySpec
    """

    path: Path
    text: str
    title: str
    gas: Any
    flow: Any
    mesh: MeshSpec
    scheme: Any
    time: Any
    boundaries: dict
    initial: Any
    output: Any
    monitor: Any = None
    kick: Any = None
    sponge: Any = None

    @property
    def name(self) -> str:
        return self.path.stem

    @property
    def output_dir(self) -> Path:
        """Run folder (absolute): ``[output] directory`` relative to the case file's folder."""
        d = self.output.directory or f"runs/{self.path.stem}"
        return (self.path.parent / d).resolve()

    def where(self, section: str) -> str:
        """Message prefix ``file: [section]``."""
        return f"{self.path.name}: [{section}]"

    def reference_state(self) -> dict:
        """Free-stream state in solver units; see :func:`reference_state`."""
        return reference_state(self.gas, self.flow)

    def make_mesh(self):
        """Build or read the mesh, then check its boundary tags against [boundaries].

        Returns
        -------
        meshing.mesh.Mesh

        Raises
        ------
        CaseError
            The generator or reader rejected the input, a mesh tag has no
            condition, or a condition names a tag the mesh lacks.
        """
        from meshing.mesh import MeshError

        ctx = _Ctx(self.path.name)
        try:
            if self.mesh.file is not None:
                mesh = _read_mesh(self.mesh.file)
            else:
                mesh = generator_function(self.mesh.generator)(**self.mesh.params)
        except (MeshError, ValueError, OSError) as exc:
            src = f"file '{self.mesh.file}'" if self.mesh.file is not None else f"generator '{self.mesh.generator}'"
            raise ctx.err("mesh", f"{src}: {exc}") from None
        self.check_tags(mesh)
        return mesh

    def check_tags(self, mesh) -> None:
        """CaseError unless the mesh's boundary tags and the [boundaries] entries are the same set."""
        ctx = _Ctx(self.path.name)
        have, given = sorted(mesh.boundary_faces), sorted(self.boundaries)
        periodic = {t for a, b, _ in mesh.periodic for t in (a, b)}
        lists = f"mesh tags: {', '.join(have) or 'none'}; [boundaries] has: {', '.join(given) or 'none'}"
        for t in have:
            if t not in self.boundaries:
                raise ctx.err("boundaries", f"mesh tag '{t}' has no boundary condition{closest(t, given)}; {lists}")
        for t in given:
            if t not in mesh.boundary_faces:
                why = " (it is periodic, so it needs no condition)" if t in periodic else ""
                raise ctx.err("boundaries", f"'{t}' is not a boundary tag of the mesh{why}{closest(t, have)}; "
                                            f"{lists}")

    def describe(self) -> list[str]:
        """A few lines for the terminal: title, flow and derived quantities."""
        ref = self.reference_state()
        lines = [f"case {self.path.name}" + (f": {self.title}" if self.title else "")]
        re = "inviscid" if ref["reynolds"] is None else f"Reynolds {ref['reynolds']:.6g}"
        lines.append(f"  flow: Mach {ref['mach']:.6g}, angle {self.flow.angle:g} deg, {re}")
        if ref["si"]:
            lines.append(f"  SI input: a = sqrt(gamma R T) = {ref['sound_speed_si']:.6g} m/s, "
                         f"rho = p/(R T) = {ref['density_si']:.6g} kg/m^3, "
                         f"mu (Sutherland) = {ref['viscosity_si']:.6g} Pa s -> Mach {ref['mach']:.6g}, "
                         f"Reynolds {ref['reynolds']:.6g}")
        s = self.scheme
        lines.append(f"  scheme: degree {s.degree}, points {s.points}, correction {s.correction}, flux {s.flux}")
        t = self.time
        stop = f"end {t.end:g}" if t.end is not None else f"{t.steps} steps"
        step = f"dt {t.dt:g}" if t.dt is not None else f"cfl {t.cfl:g}"
        lines.append(f"  time: {t.scheme}, {step}, {stop}")
        lines.append(f"  output: {self.output_dir}")
        return lines


def _read_mesh(path: Path):
    import meshing

    fn = getattr(meshing, "read_mesh", None)
    if fn is None:
        fn = importlib.import_module("meshing.generators").read_mesh
    return fn(path)


_TOP = ["title", *SCHEMA]


def reference_from_text(text: str, name: str = "case") -> dict:
    """Free-stream state (see :func:`reference_state`) from case text alone.

    Only ``[gas]`` and ``[flow]`` are read, so this works for the case text
    stored in a snapshot without the mesh file or the solver registries.

    Raises
    ------
    CaseError
        Syntax error or invalid [gas] / [flow].
    """
    ctx = _Ctx(name)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ctx.err(None, f"TOML syntax error: {exc}") from None
    for s in ("gas", "flow"):
        if not isinstance(data.get(s, {}), dict):
            raise ctx.err(None, f"'{s}' must be a section [{s}]")
    gas = GasSection(**_section_values(ctx, "gas", data.get("gas", {})))
    flow = FlowSection(**_section_values(ctx, "flow", data.get("flow", {})))
    _check_flow(ctx, data.get("flow", {}))
    return reference_state(gas, flow)


def load_case(path) -> Case:
    """Read and validate a case file.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    Case

    Raises
    ------
    CaseError
        Missing or unreadable file, TOML syntax error (with the line), unknown
        section or key (with the closest valid name), wrong type or range,
        conflicting keys, unknown registry names, missing mesh file.  Nothing
        is created or written.
    """
    path = Path(path)
    ctx = _Ctx(path.name)
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise CaseError(f"{path}: case file not found") from None
    except OSError as exc:
        raise CaseError(f"{path}: cannot read the case file: {exc.strerror}") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise ctx.err(None, f"not UTF-8 text (byte {exc.start})") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ctx.err(None, f"TOML syntax error: {exc}") from None
    return _build_case(ctx, path.resolve(), text, data)


def _build_case(ctx: _Ctx, path: Path, text: str, data: dict) -> Case:
    for key, v in data.items():
        if key not in _TOP:
            sections = ", ".join(SCHEMA)
            raise ctx.err(None, f"unknown section [{key}]{closest(key, _TOP)}; valid sections: {sections} "
                                "(and a top-level title)")
        if key == "sponge":
            if isinstance(v, dict):
                v = data[key] = [v]
            if not isinstance(v, list) or not all(isinstance(z, dict) for z in v):
                raise ctx.err(None, "sponge zones are tables [[sponge]] (tags, width, strength, exponent)")
            continue
        if key != "title" and not isinstance(v, dict):
            raise ctx.err(None, f"'{key}' must be a section [{key}], got {v!r}")
    title = data.get("title", "")
    if not isinstance(title, str):
        raise ctx.err(None, f"title must be a string, got {title!r}")
    for required in ("flow", "mesh"):
        if required not in data:
            raise ctx.err(None, f"section [{required}] is missing ({SECTION_HELP[required]})")

    tables = {s: data.get(s, {}) for s in SCHEMA}
    gas = GasSection(**_section_values(ctx, "gas", tables["gas"]))
    flow = FlowSection(**_section_values(ctx, "flow", tables["flow"]))
    _check_flow(ctx, tables["flow"])
    ref = reference_state(gas, flow)
    mesh = _mesh_spec(ctx, tables["mesh"], path.parent)
    scheme = SchemeSection(**_section_values(ctx, "scheme", tables["scheme"]))
    if isinstance(scheme.correction, float):  # a VCJH parameter value: its bound depends on the degree
        check = getattr(importlib.import_module(REGISTRIES["correction"][0]), "correction_parameter", None)
        try:
            if check is not None:
                check(scheme.correction, scheme.degree)
        except ValueError as exc:
            raise ctx.err("scheme", f"correction: {exc}") from None

    t = tables["time"]
    time = TimeSection(**_section_values(ctx, "time", t))
    if ("end" in t) == ("steps" in t):
        raise ctx.err("time", "needs exactly one of 'end' (simulation time) or 'steps'"
                              + (", not both" if "end" in t else ""))
    if "cfl" in t and "dt" in t:
        raise ctx.err("time", "give either cfl or dt, not both")

    boundaries = _boundary_specs(ctx, tables["boundaries"], ref)

    ini = tables["initial"]
    initial = InitialSection(**_section_values(ctx, "initial", ini))
    if initial.kind != "vortex":
        for k in _VORTEX_KEYS:
            if k in ini:
                raise ctx.err("initial", f"{k} applies only to kind = 'vortex' (kind is '{initial.kind}')")
    if initial.kind == "snapshot":
        if "file" not in ini:
            raise ctx.err("initial", "kind = 'snapshot' needs 'file' (the snapshot to start from)")
        snap = (path.parent / initial.file).resolve()
        if not snap.is_file():
            raise ctx.err("initial", f"file: snapshot '{snap}' not found")
        initial = dataclasses.replace(initial, file=str(snap))
    elif "file" in ini:
        raise ctx.err("initial", f"file applies only to kind = 'snapshot' (kind is '{initial.kind}')")
    output = OutputSection(**_section_values(ctx, "output", tables["output"]))
    monitor = MonitorSection(**_section_values(ctx, "monitor", tables["monitor"]))
    _check_monitor(ctx, monitor, boundaries)
    kick = None
    if "kick" in data:
        kick = KickSection(**_section_values(ctx, "kick", tables["kick"]))
        _check_kick(ctx, kick, boundaries)
    sponge = []
    for k, zone in enumerate(data.get("sponge", [])):
        z = SpongeSection(**_section_values(ctx, "sponge", zone))
        for tag in z.tags:
            if tag not in boundaries:
                raise ctx.err("sponge", f"zone {k}: tag '{tag}' has no boundary condition{closest(tag, boundaries)}; "
                                        f"boundary tags: {', '.join(sorted(boundaries)) or 'none'}")
        sponge.append(z)
    return Case(path=path, text=text, title=title, gas=gas, flow=flow, mesh=mesh, scheme=scheme, time=time,
                boundaries=boundaries, initial=initial, output=output, monitor=monitor, kick=kick,
                sponge=sponge)


#: condition types that carry forces, and those that can slide (take a `speed`)
_WALL_TYPES = ("slip-wall", "noslip-wall", "isothermal-wall")
_MOVING_WALL_TYPES = ("noslip-wall", "isothermal-wall")


def _check_tag_list(ctx: _Ctx, section: str, key: str, tags, boundaries: dict, types) -> None:
    for t in tags:
        if t not in boundaries:
            raise ctx.err(section, f"{key}: '{t}' is not a tag of [boundaries]{closest(t, list(boundaries))}; "
                                   f"tags: {', '.join(boundaries) or 'none'}")
        if boundaries[t].type not in types:
            raise ctx.err(section, f"{key}: tag '{t}' has condition '{boundaries[t].type}', which is not one of "
                                   f"{', '.join(types)}")


def _check_monitor(ctx: _Ctx, monitor, boundaries: dict) -> None:
    if monitor.walls is not None:
        _check_tag_list(ctx, "monitor", "walls", monitor.walls, boundaries, _WALL_TYPES)


def _check_kick(ctx: _Ctx, kick, boundaries: dict) -> None:
    if kick.tags is not None:
        _check_tag_list(ctx, "kick", "tags", kick.tags, boundaries, _MOVING_WALL_TYPES)
    elif not any(b.type in _MOVING_WALL_TYPES for b in boundaries.values()):
        raise ctx.err("kick", f"needs a moving wall, but no tag has one of the conditions "
                              f"{', '.join(_MOVING_WALL_TYPES)}")


# ---------------------------------------------------------------------------
# reference documentation
# ---------------------------------------------------------------------------
def _default_text(k: Key) -> str:
    if k.default is REQUIRED:
        return "required"
    if k.default is None:
        return "—"
    return f"`{toml_literal(k.default)}`"


def _valid_names(which: str) -> str:
    try:
        return ", ".join(f"`{n}`" for n in _names(registry(which)))
    except ImportError:
        return ""


def case_reference_markdown(with_registries: bool = True, heading: str = "###") -> str:
    """Markdown reference of every section and key, generated from :data:`SCHEMA`.

    With ``with_registries`` the valid names of each registry (point sets,
    corrections, fluxes, time schemes, boundary types, mesh generators and
    their parameters) are listed when their modules import.
    """
    out = []
    for section, keys in SCHEMA.items():
        text = SECTION_HELP[section]
        out.append(f"{heading} `[{section}]`\n\n{text[0].upper()}{text[1:]}.\n")
        if keys:
            out.append("| key | accepts | default | meaning |\n|---|---|---|---|")
            for name, k in keys.items():
                what = k.what()
                if with_registries and k.registry:
                    names = _valid_names(k.registry)
                    if names:
                        what += f": {names}"
                out.append(f"| `{name}` | {what} | {_default_text(k)} | {k.help} |")
            out.append("")
        if section == "mesh" and with_registries:
            try:
                gens = registry("generator")
            except ImportError:
                gens = None
            for g in (_names(gens) if gens is not None else []):
                params = generator_parameters(generator_function(g))
                out.append(f"Generator `{g}`:\n\n| key | accepts | default |\n|---|---|---|")
                for pn, p in params.items():
                    d = "required" if p.default is inspect.Parameter.empty else f"`{toml_literal(p.default)}`"
                    out.append(f"| `{pn}` | {annotation_text(p.annotation)} | {d} |")
                out.append("")
        if section == "boundaries" and with_registries:
            try:
                bcs = registry("boundary")
            except ImportError:
                bcs = None
            if bcs is not None:
                out.append("| type | parameters | meaning |\n|---|---|---|")
                for e in bcs:
                    ps = ", ".join(f"`{p}`" + ("" if e.defaults.get(p) is None else f" = {e.defaults[p]:g}")
                                   for p in e.params) or "none"
                    out.append(f"| `{e.name}` | {ps} | {e.doc} |")
                out.append("\nA parameter without a default takes the free-stream value.\n")
    return "\n".join(out)
