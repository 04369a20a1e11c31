"""Case files (solver/case.py) and the command-line error path (tools/cli.py).

Every invalid case must give a CaseError naming file, section and key, and a
failed load + mesh build must leave the folder exactly as it was.
"""
from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from meshing.box import box_mesh
from solver.case import SCHEMA, CaseError, case_reference_markdown, load_case

ROOT = Path(__file__).resolve().parents[1]


def _test_box(*, nx: int, ny: int = 2, q: int = 2, warp: float = 0.0, periodic_x: bool = False,
              extent: tuple[float, float, float, float] = (0.0, 1.0, 0.0, 1.0)):
    """Generator used by these tests (tags left, right, bottom, top; left/right periodic on request)."""
    return box_mesh(nx, ny, extent, q, warp, periodic=(periodic_x, False), name="test-box")


@pytest.fixture(autouse=True)
def generators(monkeypatch):
    """The real generator table plus 'test-box'."""
    from meshing.generators import GENERATORS

    monkeypatch.setitem(GENERATORS, "test-box", _test_box)
    return GENERATORS


def _bcs():
    from solver.boundaries import BOUNDARY_CONDITIONS

    return BOUNDARY_CONDITIONS


def _wall() -> str:
    """A boundary type without parameters."""
    return next(e.name for e in _bcs() if not e.params)


def _stateful():
    """A boundary type with parameters."""
    return next(e for e in _bcs() if e.params)


def base_sections() -> dict:
    wall = f'"{_wall()}"'
    return {
        "flow": {"mach": "0.5", "angle": "30.0"},
        "mesh": {"generator": '"test-box"', "nx": "3"},
        "time": {"end": "1.0"},
        "boundaries": {"left": wall, "right": wall, "bottom": wall, "top": wall},
    }


def render(sections: dict, title: str = "a test case") -> str:
    lines = [f'title = "{title}"', ""]
    for name, keys in sections.items():
        lines.append(f"[{name}]")
        lines += [f"{k} = {v}" for k, v in keys.items()]
        lines.append("")
    return "\n".join(lines)


def write_case(folder: Path, set=None, drop=(), name="case.toml", text=None) -> Path:
    s = base_sections()
    for sec, keys in (set or {}).items():
        s.setdefault(sec, {}).update(keys)
    for sec, key in drop:
        s[sec].pop(key)
    path = folder / name
    path.write_text(render(s) if text is None else text)
    return path


def listing(folder: Path) -> list[str]:
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*"))


def expect_error(folder: Path, **kw) -> str:
    """Load + mesh build must fail with CaseError and create nothing; returns the message."""
    path = write_case(folder, **kw)
    before = listing(folder)
    with pytest.raises(CaseError) as info:
        load_case(path).make_mesh()
    assert listing(folder) == before, "a failed load created files"
    msg = str(info.value)
    assert msg.startswith(f"{path.name}: "), msg
    return msg


# ---------------------------------------------------------------------------
def test_valid_case_defaults(tmp_path):
    case = load_case(write_case(tmp_path))
    assert case.title == "a test case"
    assert case.text == (tmp_path / "case.toml").read_text()
    # every default of the schema is filled in
    for sec in ("gas", "scheme", "initial", "output"):
        obj = getattr(case, sec)
        for key, k in SCHEMA[sec].items():
            assert getattr(obj, key) == k.default, (sec, key)
    assert (case.scheme.degree, case.scheme.points, case.scheme.correction, case.scheme.flux) == \
        (3, "gauss-legendre", "dg", "roe")
    assert (case.time.scheme, case.time.cfl, case.time.dt, case.time.end, case.time.steps) == \
        ("ssp-rk33", 0.9, None, 1.0, None)
    assert case.output_dir == tmp_path / "runs" / "case"
    ref = case.reference_state()
    # non-dimensionalisation of the rules: rho = 1, |u| = 1, p = 1/(gamma M^2)
    assert ref["rho"] == 1.0 and ref["p"] == pytest.approx(1.0 / (1.4 * 0.25), rel=1e-15)
    assert ref["u"] == pytest.approx(math.sqrt(3) / 2, rel=1e-15) and ref["v"] == pytest.approx(0.5, rel=1e-15)
    assert ref["reynolds"] is None and ref["mu"] is None
    mesh = case.make_mesh()
    assert mesh.n_elements == 3 * 2 and mesh.tags == ["bottom", "left", "right", "top"]
    assert not (tmp_path / "runs").exists()


def test_viscous_and_periodic_case(tmp_path):
    case = load_case(write_case(tmp_path, set={
        "flow": {"reynolds": "200.0", "length": "2.0"},
        "mesh": {"periodic_x": "true", "extent": "[0.0, 2.0, 0.0, 1.0]"},
        "scheme": {"degree": "4", "correction": "0.01"},
        "initial": {"kind": '"vortex"', "center": "[0.5, 0.5]"},
        "output": {"directory": '"out/here"'},
    }, drop=[("boundaries", "left"), ("boundaries", "right")]))
    ref = case.reference_state()
    assert ref["reynolds"] == 200.0 and ref["mu"] == pytest.approx(2.0 / 200.0, rel=1e-15)
    assert case.scheme.correction == 0.01 and case.initial.center == [0.5, 0.5]
    assert case.mesh.params["extent"] == (0.0, 2.0, 0.0, 1.0)
    assert case.output_dir == tmp_path / "out" / "here"
    assert case.make_mesh().tags == ["bottom", "top"]


@pytest.mark.parametrize("section,bad,good", [
    ("gas", "gama", "gamma"),
    ("flow", "machh", "mach"),
    ("scheme", "degre", "degree"),
    ("time", "step", "steps"),
    ("initial", "strenght", "strength"),
    ("output", "directroy", "directory"),
    ("mesh", "nxx", "nx"),
])
def test_unknown_key_with_suggestion(tmp_path, section, bad, good):
    msg = expect_error(tmp_path, set={section: {bad: "1"}})
    assert f"[{section}] unknown key '{bad}' (did you mean '{good}'?); valid keys" in msg
    assert good in msg.split("valid keys")[1]


def test_unknown_key_message_format(tmp_path):
    msg = expect_error(tmp_path, set={"scheme": {"degre": "3"}})
    assert msg == ("case.toml: [scheme] unknown key 'degre' (did you mean 'degree'?); "
                   "valid keys: degree, points, correction, flux, viscous")


def test_unknown_boundary_parameter(tmp_path):
    e = _stateful()
    bad = e.params[0] + "x"
    msg = expect_error(tmp_path, set={"boundaries": {"top": f'{{ type = "{e.name}", {bad} = 1.0 }}'}})
    assert f"[boundaries] top: unknown key '{bad}'" in msg and f"(did you mean '{e.params[0]}'?)" in msg


def test_unknown_section(tmp_path):
    text = render(base_sections()) + "\n[schem]\ndegree = 3\n"
    msg = expect_error(tmp_path, text=text)
    assert "unknown section [schem] (did you mean 'scheme'?)" in msg


@pytest.mark.parametrize("section,key,value,what", [
    ("scheme", "degree", '"three"', "an integer 1..8"),
    ("scheme", "degree", "3.0", "an integer 1..8"),
    ("gas", "gamma", '"air"', "a number > 1"),
    ("gas", "viscosity", '"sutherlan"', "one of 'constant', 'sutherland'"),
    ("initial", "center", "[1.0]", "an array of 2 numbers"),
    ("time", "progress_every", "true", "an integer >= 1"),
    ("mesh", "nx", '"ten"', "an integer"),
    ("mesh", "extent", "[0, 1]", "an array of 4 numbers"),
])
def test_wrong_type(tmp_path, section, key, value, what):
    msg = expect_error(tmp_path, set={section: {key: value}})
    assert f"[{section}] {key} must be {what}, got " in msg


def test_wrong_type_message_format(tmp_path):
    msg = expect_error(tmp_path, set={"scheme": {"degree": '"three"'}})
    assert msg == "case.toml: [scheme] degree must be an integer 1..8, got 'three'"


@pytest.mark.parametrize("section,key,value", [
    ("scheme", "degree", "9"), ("scheme", "degree", "0"), ("gas", "gamma", "1.0"), ("gas", "prandtl", "0"),
    ("time", "cfl", "1.5"), ("time", "cfl", "0.0"), ("flow", "mach", "-0.5"), ("initial", "radius", "-1.0"),
    ("output", "snapshot_every", "-0.1"), ("flow", "reynolds", "nan"), ("flow", "angle", "inf"),
])
def test_out_of_range(tmp_path, section, key, value):
    msg = expect_error(tmp_path, set={section: {key: value}})
    assert f"[{section}] {key} must be " in msg and f"got {value}" in msg.replace("'", "")


def test_steps_out_of_range(tmp_path):
    msg = expect_error(tmp_path, set={"time": {"steps": "0"}}, drop=[("time", "end")])
    assert "[time] steps must be an integer >= 1, got 0" in msg


def test_missing_mesh_file(tmp_path):
    s = base_sections()
    s["mesh"] = {"file": '"meshes/nothere.h5"'}
    msg = expect_error(tmp_path, text=render(s))
    assert "[mesh] file: mesh file" in msg and str(tmp_path / "meshes" / "nothere.h5") in msg


def test_mesh_needs_one_source(tmp_path):
    msg = expect_error(tmp_path, set={"mesh": {"file": '"x.h5"'}})
    assert "[mesh] needs exactly one of 'generator' or 'file', not both" in msg
    s = base_sections()
    s["mesh"] = {}
    assert "[mesh] needs exactly one of" in expect_error(tmp_path, text=render(s))


def test_mesh_generator_errors(tmp_path):
    msg = expect_error(tmp_path, set={"mesh": {"generator": '"test-bx"'}})
    assert "[mesh] generator: unknown" in msg and "(did you mean 'test-box'?)" in msg
    msg = expect_error(tmp_path, drop=[("mesh", "nx")])
    assert "[mesh] generator 'test-box' needs key 'nx' (an integer)" in msg
    # rejected by the generator itself (box_mesh: at least one element)
    msg = expect_error(tmp_path, set={"mesh": {"nx": "0"}})
    assert msg.startswith("case.toml: [mesh] generator 'test-box': ") and "nx=0" in msg


def test_end_and_steps(tmp_path):
    msg = expect_error(tmp_path, set={"time": {"steps": "10"}})
    assert "[time] needs exactly one of 'end' (simulation time) or 'steps', not both" in msg
    msg = expect_error(tmp_path, drop=[("time", "end")])
    assert "[time] needs exactly one of 'end'" in msg
    msg = expect_error(tmp_path, set={"time": {"dt": "0.01", "cfl": "0.5"}})
    assert "[time] give either cfl or dt" in msg


def test_mach_with_velocity(tmp_path):
    msg = expect_error(tmp_path, set={"flow": {"velocity": "100.0", "pressure": "1e5"}})
    assert "[flow] mach cannot be combined with velocity" in msg
    msg = expect_error(tmp_path, set={"flow": {"pressure": "1e5"}})
    assert "[flow] pressure belongs to the SI form" in msg
    msg = expect_error(tmp_path, drop=[("flow", "mach")])
    assert "[flow] mach is required" in msg


def test_tag_without_condition(tmp_path):
    msg = expect_error(tmp_path, drop=[("boundaries", "top")])
    assert "[boundaries] mesh tag 'top' has no boundary condition" in msg
    assert "mesh tags: bottom, left, right, top; [boundaries] has: bottom, left, right" in msg


def test_condition_without_tag(tmp_path):
    msg = expect_error(tmp_path, set={"boundaries": {"topp": f'"{_wall()}"'}})
    assert "[boundaries] 'topp' is not a boundary tag of the mesh (did you mean 'top'?)" in msg
    assert "mesh tags: bottom, left, right, top; [boundaries] has: bottom, left, right, top, topp" in msg


def test_condition_on_periodic_tag(tmp_path):
    msg = expect_error(tmp_path, set={"mesh": {"periodic_x": "true"}})
    assert "[boundaries] 'left' is not a boundary tag of the mesh (it is periodic" in msg


def test_unknown_boundary_type(tmp_path):
    msg = expect_error(tmp_path, set={"boundaries": {"top": '"slipwal"'}})
    assert "[boundaries] top: unknown boundary type 'slipwal'" in msg
    valid = msg.split("valid types: ")[1]
    assert valid == ", ".join(_bcs().names())
    msg = expect_error(tmp_path, set={"boundaries": {"top": "{ density = 1.0 }"}})
    assert "[boundaries] top: the table needs 'type'" in msg


def test_boundary_parameter_value_checked(tmp_path):
    if "fixed-state" not in _bcs():
        pytest.skip("no fixed-state condition")
    msg = expect_error(tmp_path, set={"boundaries": {"top": '{ type = "fixed-state", density = -1.0 }'}})
    assert msg.startswith("case.toml: [boundaries] top: ") and "density" in msg


def test_correction_number_below_bound(tmp_path):
    msg = expect_error(tmp_path, set={"scheme": {"correction": "-1.0"}})
    assert msg.startswith("case.toml: [scheme] correction: ")
    msg = expect_error(tmp_path, set={"scheme": {"correction": '"dgg"'}})
    assert "[scheme] correction: unknown" in msg and "(did you mean 'dg'?)" in msg


def test_vortex_keys_need_vortex(tmp_path):
    msg = expect_error(tmp_path, set={"initial": {"strength": "3.0"}})
    assert "[initial] strength applies only to kind = 'vortex'" in msg


def test_toml_syntax_error(tmp_path):
    text = render(base_sections()).replace("[time]\n", "[time]\ncfl = \n")
    lineno = text.splitlines().index("cfl = ") + 1
    msg = expect_error(tmp_path, text=text)
    assert msg.startswith("case.toml: TOML syntax error") and f"line {lineno}" in msg


def test_missing_case_file(tmp_path):
    with pytest.raises(CaseError, match="case file not found"):
        load_case(tmp_path / "none.toml")


def test_si_input(tmp_path):
    T, P, U, L, R, g = 300.0, 101325.0, 100.0, 0.5, 287.05, 1.4
    flow = {"velocity": f"{U}", "temperature": f"{T}", "pressure": f"{P}", "length": f"{L}"}
    path = write_case(tmp_path, text=render({**base_sections(), "flow": flow}))
    ref = load_case(path).reference_state()
    # hand calculation: a = sqrt(gamma R T), rho = p/(R T), Sutherland (White, Viscous Fluid Flow):
    # mu = 1.716e-5 (T/273.15)^1.5 (273.15 + 110.4)/(T + 110.4), Re = rho U L / mu
    a = math.sqrt(g * R * T)
    rho = P / (R * T)
    mu = 1.716e-5 * (T / 273.15) ** 1.5 * (273.15 + 110.4) / (T + 110.4)
    assert ref["mach"] == pytest.approx(U / a, rel=1e-14)
    assert ref["reynolds"] == pytest.approx(rho * U * L / mu, rel=1e-14)
    assert ref["mu"] == pytest.approx(L / (rho * U * L / mu), rel=1e-14)
    # handbook value for air at 300 K: mu = 184.6e-7 N s/m^2 (Incropera & DeWitt, Table A.4; from memory)
    assert ref["viscosity_si"] == pytest.approx(184.6e-7, rel=2e-3)
    # speed of sound in air at 300 K is about 347.2 m/s (from memory)
    assert ref["sound_speed_si"] == pytest.approx(347.2, abs=0.2)
    assert ref["p"] == pytest.approx(1.0 / (g * ref["mach"] ** 2), rel=1e-15)
    lines = "\n".join(load_case(path).describe())
    assert "SI input" in lines and f"{U / a:.6g}" in lines


def test_si_needs_pressure(tmp_path):
    path = write_case(tmp_path, text=render({**base_sections(), "flow": {"velocity": "50.0"}}))
    with pytest.raises(CaseError, match=r"\[flow\] pressure is required in the SI form"):
        load_case(path)


def test_reference_markdown_lists_every_key():
    md = case_reference_markdown()
    for sec, keys in SCHEMA.items():
        assert f"### `[{sec}]`" in md
        for key in keys:
            assert f"| `{key}` |" in md
    for e in _bcs():
        assert f"| `{e.name}` |" in md


# ---------------------------------------------------------------------------
# command line
# ---------------------------------------------------------------------------
def test_cli_bad_case_in_process(tmp_path, capsys):
    from tools.cli import main

    path = write_case(tmp_path, set={"scheme": {"degre": "3"}})
    before = listing(tmp_path)
    rc = main(["solve", str(path)])
    err = capsys.readouterr().err
    assert rc == 2
    assert err == ("quadfr: error: case.toml: [scheme] unknown key 'degre' (did you mean 'degree'?); "
                   "valid keys: degree, points, correction, flux, viscous\n")
    assert listing(tmp_path) == before
    assert main(["solve", str(tmp_path / "none.toml")]) == 2
    assert "case file not found" in capsys.readouterr().err
    assert main(["vtu", str(tmp_path / "none.h5")]) == 2
    assert "not found" in capsys.readouterr().err
    assert main(["verify", "no-such-check"]) == 2
    assert "unknown check 'no-such-check'" in capsys.readouterr().err


def test_cli_bad_case_subprocess(tmp_path):
    path = write_case(tmp_path, set={"gas": {"gama": "1.4"}})
    r = subprocess.run([sys.executable, "-m", "tools.cli", "solve", str(path)], cwd=ROOT, capture_output=True,
                       text=True, timeout=60)
    assert r.returncode == 2
    assert r.stderr.startswith("quadfr: error: case.toml: [gas] unknown key 'gama' (did you mean 'gamma'?)")
    assert "Traceback" not in r.stderr and len(r.stderr.splitlines()) == 1


def test_cli_mesh_options(tmp_path, capsys):
    from meshing import read_mesh
    from tools.cli import main

    out = tmp_path / "m.h5"
    rc = main(["mesh", "test-box", "--nx", "3", "--extent", "0,2,0,1", "--periodic-x", "true", "-o", str(out)])
    assert rc == 0
    m = read_mesh(str(out))
    assert m.n_elements == 6 and m.tags == ["bottom", "top"] and m.vertices[:, 0].max() == 2.0
    capsys.readouterr()
    assert main(["mesh", "test-box", "--nx", "ten", "-o", str(tmp_path / "n.h5")]) == 2
    assert "quadfr: error: mesh test-box: --nx must be an integer, got 'ten'" in capsys.readouterr().err
    with pytest.raises(SystemExit) as info:  # argparse: a required generator parameter is missing
        main(["mesh", "test-box", "-o", str(tmp_path / "n.h5")])
    assert info.value.code == 2
    assert not (tmp_path / "n.h5").exists()


def test_cli_cases_lists_titles(tmp_path, capsys):
    from tools.cli import main

    write_case(tmp_path, name="one.toml")
    (tmp_path / "two.toml").write_text('title = "second"\n')
    assert main(["cases", "--dir", str(tmp_path)]) == 0
    out = capsys.readouterr().out.splitlines()
    assert out == ["one.toml  a test case", "two.toml  second"]


@pytest.mark.parametrize("name", sorted(p.name for p in (ROOT / "cases").glob("*.toml")))
def test_bundled_cases_build(name):
    """Every bundled case is valid: mesh built, tags match, operator, stepper and initial state built."""
    from solver.run import build_problem

    case = load_case(ROOT / "cases" / name)
    mesh = case.make_mesh()
    assert mesh.n_elements > 0 and sorted(case.boundaries) == mesh.tags
    prob = build_problem(case)
    assert prob.U0.shape == prob.op.shape and np.all(np.isfinite(prob.U0))


def test_cli_meshcheck_on_a_case(tmp_path, capsys):
    from tools.cli import main

    good = write_case(tmp_path, name="good.toml")
    assert main(["meshcheck", str(good)]) == 0
    out = capsys.readouterr().out
    assert "test-box: 6 quads" in out and "mesh is valid" in out
    # warp 0.3 folds the 3 x 2 box: the quality check finds inverted elements (J <= 0)
    bad = write_case(tmp_path, name="bad.toml", set={"mesh": {"warp": "0.3"}})
    assert main(["meshcheck", str(bad)]) == 1
    cap = capsys.readouterr()
    assert "inverted element" in cap.err and "mesh is valid" not in cap.out
    assert main(["meshcheck", str(tmp_path / "none.h5")]) == 2
    assert "quadfr: error: mesh file" in capsys.readouterr().err


def test_mesh_from_file(tmp_path):
    from meshing import write_mesh

    (tmp_path / "meshes").mkdir()
    write_mesh(_test_box(nx=2), str(tmp_path / "meshes" / "m.h5"))
    s = base_sections()
    s["mesh"] = {"file": '"meshes/m.h5"'}
    case = load_case(write_case(tmp_path, text=render(s)))
    assert case.mesh.file == tmp_path / "meshes" / "m.h5"
    assert case.make_mesh().n_elements == 4
    # extra keys next to file are unknown; an unreadable file is reported under [mesh]
    s["mesh"] = {"file": '"meshes/m.h5"', "nx": "2"}
    assert "[mesh] unknown key 'nx'; valid keys with file: file" in expect_error(tmp_path, text=render(s))
    (tmp_path / "m.txt").write_text("x")
    s["mesh"] = {"file": '"m.txt"'}
    msg = expect_error(tmp_path, text=render(s))
    assert msg.startswith(f"case.toml: [mesh] file '{tmp_path / 'm.txt'}': ")


def test_cli_mesh_generator_error_names_parameter(tmp_path, capsys):
    from tools.cli import main

    assert main(["mesh", "test-box", "--nx", "0", "-o", str(tmp_path / "m.h5")]) == 2
    err = capsys.readouterr().err
    assert err.startswith("quadfr: error: mesh test-box: ") and "nx=0" in err
    assert list(tmp_path.iterdir()) == []


def test_cli_mesh_writes_native_file(tmp_path, capsys):
    from meshing import read_mesh
    from tools.cli import main

    out = tmp_path / "m.h5"
    assert main(["mesh", "test-box", "--nx", "3", "--q", "3", "--warp", "0.02", "-o", str(out)]) == 0
    back, made = read_mesh(str(out)), _test_box(nx=3, q=3, warp=0.02)
    assert np.array_equal(back.geom, made.geom) and back.tags == made.tags


def test_generator_file_parameter_relative_to_case(tmp_path, generators, monkeypatch):
    seen = {}

    def from_file(*, points_file: str = "", nx: int = 2):
        seen["points_file"] = points_file
        return _test_box(nx=nx)

    monkeypatch.setitem(generators, "test-file", from_file)
    (tmp_path / "data").mkdir()
    (tmp_path / "data" / "pts.txt").write_text("0 0\n")
    case = load_case(write_case(tmp_path, set={"mesh": {"generator": '"test-file"', "points_file": '"data/pts.txt"',
                                                        "nx": "2"}}))
    case.make_mesh()
    assert seen["points_file"] == str(tmp_path / "data" / "pts.txt")
    msg = expect_error(tmp_path, set={"mesh": {"generator": '"test-file"', "points_file": '"nope.txt"', "nx": "2"}})
    assert f"[mesh] points_file: file '{tmp_path / 'nope.txt'}' not found" in msg
