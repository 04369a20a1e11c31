"""Cost at equal error (tools/accuracy.py) on exact power laws."""
import math

import numpy as np
import pytest

from tools.accuracy import cost_at_error, default_targets, equal_error_table


def test_cost_at_error_is_exact_on_a_power_law():
    # e = C N^(-k/2) is a straight line in log-log, so the interpolation must invert it exactly
    N = np.array([1e3, 4e3, 1.6e4, 6.4e4])
    e = 7.0 * N ** -1.5
    for target in (7.0 * 2e3 ** -1.5, 7.0 * 5e4 ** -1.5):
        expect = (7.0 / target) ** (1 / 1.5)
        assert cost_at_error(N, e, target) == pytest.approx(expect, rel=1e-12)
    assert math.isnan(cost_at_error(N, e, 1e-12))   # beyond the finest level: no extrapolation
    assert math.isnan(cost_at_error(N, e, 10.0))    # above the coarsest level


def test_equal_error_ratio_between_two_power_laws():
    # p = 1: e = 10 / N; p = 3: e = 1000 / N^2.  At e = 1e-4: N1 = 1e5, N3 = 1e3.5, ratio 10^1.5
    N = np.logspace(2, 6, 9)
    curves = {1: (N, 10.0 / N), 3: (N, 1e3 / N ** 2)}
    rows = equal_error_table(curves, targets=[1e-4])
    assert rows[0]["best_degree"] == 3
    assert rows[0]["ratio"] == pytest.approx(10 ** 1.5, rel=1e-12)
    t = default_targets(curves)
    assert t and all(1e-5 < x < 1e-1 for x in t)   # inside the overlap of both error ranges
