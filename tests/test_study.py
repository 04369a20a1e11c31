"""Resolution studies (tools/study.py, tools/study_outputs.py)."""
import math
import tomllib
from pathlib import Path

import pytest

from tools.richardson import representative_spacing
from tools.study import (Level, StudyError, analyse, levels_csv, parse_degrees, parse_meshes,
                         parse_tolerance, refined_mesh_table, run_study, toml_dumps)

ROOT = Path(__file__).resolve().parents[1]
VORTEX = ROOT / "cases" / "vortex-accuracy.toml"


def _vortex_case(tmp_path, name="v.toml", **time):
    """The shipped accuracy case on a 4 x 4 base mesh, with [time] keys replaced."""
    text = VORTEX.read_text()
    text = text.replace("nx = 8", "nx = 4").replace("ny = 8", "ny = 4")
    for k, v in time.items():
        lines = [ln for ln in text.splitlines() if not ln.startswith(f"{k} =")]
        if k == "dt":
            lines = [ln for ln in lines if not ln.startswith("cfl =")]
        i = lines.index("[time]")
        lines.insert(i + 1, f"{k} = {v}")
        text = "\n".join(lines) + "\n"
    p = tmp_path / name
    p.write_text(text)
    return p


def _quiet(*a, **k):
    pass


@pytest.fixture(scope="module")
def serial_study(tmp_path_factory):
    d = tmp_path_factory.mktemp("serial")
    case = _vortex_case(d)
    return run_study(case, [1, 2], parse_meshes("1,2"), jobs=1, threads=1, study_dir=d / "study", printer=_quiet)


def test_options_parse_and_reject():
    assert parse_degrees("1-3,5") == [1, 2, 3, 5]
    with pytest.raises(StudyError, match="outside 1..8"):
        parse_degrees("0,1")
    assert [m.factor for m in parse_meshes("0.5,1,2")] == [0.5, 1.0, 2.0]
    with pytest.raises(StudyError, match="not found"):
        parse_meshes("nothere.h5")
    assert parse_tolerance("2%,St=0.5%") == (0.02, {"St": 0.005})
    with pytest.raises(StudyError, match="--tolerance"):
        parse_tolerance("St=abc")


def test_refinement_rules(tmp_path):
    from solver.case import load_case

    # refinement by 2 doubles the element counts and takes the square root of the growth ratio
    # (the same geometric layer distribution with twice the layers)
    p = tmp_path / "cyl.toml"
    p.write_text('[flow]\nmach = 0.2\n[mesh]\ngenerator = "cylinder"\nn_radial = 6\nn_around = 12\n'
                 'growth = 1.44\nfar_radius = 20.0\n[time]\nend = 1.0\n'
                 '[boundaries]\nwall = "slip-wall"\nfar = "far-field"\n')
    case = load_case(p)
    table, changed = refined_mesh_table(case, 2.0)
    assert table["n_radial"] == 12 and table["n_around"] == 24
    assert table["growth"] == pytest.approx(1.2, rel=1e-14)
    assert set(changed) == {"n_radial", "n_around", "growth"}
    assert refined_mesh_table(case, 1.0)[1] == {}


def test_toml_writer_round_trips():
    # the written text must parse back (Python's tomllib) to the same data
    data = {"title": 'a "quoted" title', "mesh": {"generator": "blocks", "bodies": [[-0.5, 0.5, -0.5, 0.5]],
                                                  "q": 2, "periodic_x": True},
            "boundaries": {"wall": {"type": "fixed-state", "pressure": 1.5}, "far": "far-field"},
            "time": {"end": 2.0, "dt": 1e-3}}
    assert tomllib.loads(toml_dumps(data, header="comment")) == data


def test_level_dof_exact(serial_study):
    # DoF = elements (p+1)^2 x 4 with elements = nx ny of the refined box (4x4, 8x8)
    got = {lv.label: (lv.elements, lv.dof) for lv in serial_study["levels"]}
    for p in (1, 2):
        for f, n in (("x1", 4), ("x2", 8)):
            assert got[f"p{p}-{f}"] == (n * n, n * n * (p + 1) ** 2 * 4)


def test_vortex_error_output_matches_verification_path(serial_study):
    # the study's output function on the p = 2, 8 x 8 level must equal the error that
    # `quadfr verify vortex` computes for the same run (Shu 1998; Yee, Sandham & Djomehri 1999)
    from tools.verify.vortex import run_vortex_case

    lv = next(x for x in serial_study["levels"] if x.label == "p2-x2")
    assert lv.status == "ok"
    ref = run_vortex_case(2, 8, t_end=2.0)
    assert lv.outputs["rho_L2_error"] == pytest.approx(ref["error"], rel=1e-12)
    assert lv.steps == ref["steps"]


def test_two_workers_equal_serial(serial_study, tmp_path):
    case = _vortex_case(tmp_path)
    par = run_study(case, [1, 2], parse_meshes("1,2"), jobs=2, threads=1, study_dir=tmp_path / "study",
                    printer=_quiet)
    a = {lv.label: (lv.status, lv.dof, lv.steps, lv.outputs) for lv in serial_study["levels"]}
    b = {lv.label: (lv.status, lv.dof, lv.steps, lv.outputs) for lv in par["levels"]}
    assert a == b   # bit-identical outputs: the kernels have no thread-dependent reductions
    assert all(v[0] == "ok" for v in b.values())


def test_failed_level_is_reported_and_others_complete(tmp_path, capsys):
    # a fixed step of 0.3 is stable for p = 1 on the 4 x 4 box but about twice the limit for p = 6
    # (the explicit limit shrinks roughly like 1/(p+1)^2): that level must blow up and be reported
    import json

    from tools.cli import main

    case = _vortex_case(tmp_path, dt=0.3, end=6.0, progress_every=5)
    rc = main(["study", str(case), "--degrees", "1,6", "--threads", "1", "--out", str(tmp_path / "study"),
               "--quiet", "--no-plot"])
    out = capsys.readouterr().out
    assert rc == 1                                   # a failed level makes the exit status 1
    assert "p6-x1 FAILED" in out and "failed levels: p6-x1" in out
    data = json.loads((tmp_path / "study" / "study.json").read_text())
    lv = {x["label"]: x for x in data["study"]["levels"]}
    assert lv["p6-x1"]["status"] == "failed" and "finite" in lv["p6-x1"]["error"]
    assert lv["p1-x1"]["status"] == "ok" and math.isfinite(lv["p1-x1"]["outputs"]["rho_L2_error"])
    assert "p1-x1" in (tmp_path / "study" / "study.md").read_text()


def test_report_outputs_come_from_summarize(tmp_path, monkeypatch):
    # the 'report' outputs are whatever tools.report.summarize(run_dir, t_from) returns (numbers only);
    # a stand-in that counts the snapshots of the run folder checks the interface in-process
    import tools.report

    def fake(run_dir, t_from=None):
        return {"snapshots": float(len(list(Path(run_dir).glob("state-*.h5")))), "t_from": t_from, "note": "x"}

    monkeypatch.setattr(tools.report, "summarize", fake, raising=False)
    case = _vortex_case(tmp_path, end=0.5)
    st = run_study(case, [1], jobs=1, threads=1, outputs="report", t_from=0.25, study_dir=tmp_path / "s",
                   printer=_quiet)
    assert st["levels"][0].status == "ok"
    assert st["levels"][0].outputs == {"snapshots": 1.0, "t_from": 0.25}


def _synthetic(a=2.0, b=-5.0, k=2.0):
    """Levels whose output is exactly a + b h^k with h = (DoF/4)^(-1/2) (a mesh sequence at p = 2)."""
    levels = []
    for i, n in enumerate((8, 12, 20, 32)):
        dof = n * n * 9 * 4
        h = representative_spacing(dof / 4)
        lv = Level(label=f"p2-m{i}", degree=2, mesh=f"m{i}", mesh_index=i, case_path=f"/nowhere/{i}/case.toml",
                   elements=n * n, dof=dof, status="ok", wall=float(n), rhs=100)
        lv.outputs = {"q": a + b * h ** k}
        levels.append(lv)
    return {"case": "/nowhere/c.toml", "study_dir": "/nowhere", "outputs": "report", "jobs": 1, "threads": 1,
            "cores": 2, "levels": levels}


def test_analysis_on_an_analytic_sequence():
    st = _synthetic()
    an = analyse(st, (0.001, {}))
    q = an["outputs"]["q"]
    seq = q["sequences"][0]
    r = seq["richardson"]
    assert r["levels"] == ["p2-m3", "p2-m2", "p2-m1"]          # the three finest, finest first
    assert r["order"] == pytest.approx(2.0, rel=1e-10)
    assert q["reference"] == pytest.approx(2.0, rel=1e-12)      # the Richardson limit is a
    # within 0.1 % of a: |b| h^2 <= 0.002  <=>  h^2 = 4/DoF... pick by hand
    ok = [lv.label for lv in st["levels"] if abs(lv.outputs["q"] - 2.0) <= 0.002]
    assert q["within"] == ok
    assert q["cheapest"] == min(ok, key=lambda s: int(s[-1]))   # wall grows with the mesh
    csv = levels_csv(st, an)
    assert csv.splitlines()[0].endswith(",q") and len(csv.splitlines()) == 5


def test_verdict_judges_the_engineering_outputs():
    # 'report' outputs: St, mean Cd, lift amplitude ... are judged; window bounds and a mean lift that is
    # noise about zero are tabulated only, unless a tolerance names them or the mean lift is not ~0
    st = _synthetic()
    for i, lv in enumerate(st["levels"]):
        q = lv.outputs.pop("q")
        lv.outputs.update(St=q, window_start=30.0 + 3.0 * (-1) ** i, mean_cl=1e-4 * (-1) ** i)
    an = analyse(st, (0.001, {}))
    assert an["judged"] == ["St"]
    assert an["cheapest_all"] == an["outputs"]["St"]["cheapest"] is not None
    assert an["outputs"]["window_start"]["judged"] is False and an["outputs"]["mean_cl"]["judged"] is False
    an2 = analyse(st, (0.001, {"window_start": 0.5}))
    assert an2["judged"] == ["St", "window_start"]
    for lv in st["levels"]:
        lv.outputs["mean_cl"] += 0.5  # a real mean lift (an airfoil at incidence)
    assert "mean_cl" in analyse(st, (0.001, {}))["judged"]


def test_reanalyse_reads_the_study_back(serial_study, tmp_path):
    from tools.study import load_study, write_reports

    an = analyse(serial_study, 0.01)
    write_reports(serial_study, an, plot=False)
    back = load_study(serial_study["study_dir"])
    assert [lv.label for lv in back["levels"]] == [lv.label for lv in serial_study["levels"]]
    assert [lv.outputs for lv in back["levels"]] == [lv.outputs for lv in serial_study["levels"]]
    assert analyse(back, 0.01)["cheapest_all"] == an["cheapest_all"]
    with pytest.raises(StudyError, match=r"study.json: not found"):
        load_study(tmp_path)
