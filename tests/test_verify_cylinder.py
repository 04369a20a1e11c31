"""``quadfr verify cylinder`` (tools/verify/cylinder.py): the cylinder wake against published values.

References (printed by the check): Dennis & Chang 1970 and Fornberg 1980 (Re = 40 drag and bubble
length), Williamson 1988 (Re = 100 Strouhal number), Park, Kwon & Choi 1998 and Liu, Zheng & Sung 1998
(Re = 100 mean drag and lift amplitude); from memory where the check says so.  The quick form is coarse
and short, with the looser tolerances of ``QUICK['tol']``; the full form runs the bundled cases.
"""
from __future__ import annotations

import pytest

from tools.verify.cylinder import FULL, QUICK, REFERENCES, verify_cylinder


def test_reference_values():
    # Williamson (1988): St = -3.3265/Re + 0.1816 + 1.600e-4 Re at Re = 100
    assert REFERENCES["st100"][0] == pytest.approx(0.164335, abs=1e-6)
    assert all(QUICK["tol"][k] >= FULL["tol"][k] for k in FULL["tol"])


def test_quick_cylinder_verification(capsys):
    r = verify_cylinder(quick=True)
    out = capsys.readouterr().out
    assert "Williamson 1988" in out and "Dennis & Chang 1970" in out
    rows = {row["quantity"]: row for row in r["table"]}
    assert set(rows) == set(REFERENCES)
    assert r["passed"], out


@pytest.mark.slow
def test_full_cylinder_verification(capsys):
    r = verify_cylinder(quick=False)
    assert r["passed"], capsys.readouterr().out
