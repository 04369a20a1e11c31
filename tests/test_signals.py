"""Signal analysis (tools/signals.py) on synthetic signals with a known answer.

The reference is the signal's own construction (frequency, amplitude, mean),
so every check can fail; tolerances are set from the estimator's expected
error (spectral peak of a Hann-windowed record of >= 10 periods).
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from tools import signals


def _signal(f=0.1643, amp=0.33, mean=1.34, periods=12.0, per_period=60, noise=0.0, drift=0.0, seed=0,
            uneven=False, harmonic=0.0):
    rng = np.random.default_rng(seed)
    T = periods / f
    n = int(periods * per_period)
    t = np.linspace(0.0, T, n)
    if uneven:  # time steps that vary by +-20 % as in an explicit run
        dt = np.diff(t) * (1.0 + 0.2 * np.sin(np.arange(n - 1) * 0.37))
        t = np.concatenate([[0.0], np.cumsum(dt)])
    x = mean + amp * np.sin(2 * np.pi * f * t + 0.4) + harmonic * amp * np.sin(4 * np.pi * f * t + 1.0)
    x = x + drift * t + noise * amp * rng.standard_normal(t.size)
    return t, x


@pytest.mark.parametrize("kw", [
    dict(),
    dict(noise=0.1),                       # 10 % white noise
    dict(drift=0.002),                     # linear drift of 0.012 per period
    dict(noise=0.1, drift=0.002, uneven=True),
    dict(harmonic=0.2, uneven=True),       # a second harmonic, as the drag signal has
    dict(f=0.3286, periods=10.3),          # not a whole number of periods in the record
])
def test_spectral_peak_within_0p1_percent(kw):
    f = kw.get("f", 0.1643)
    t, x = _signal(**kw)
    got = signals.spectral_peak(t, x)["frequency"]
    assert abs(got / f - 1.0) < 1e-3, (got, f)


def test_spectral_peak_sub_bin():
    # 10.3 periods: the true frequency is 0.3 bin away from an unpadded FFT bin; the
    # refined peak must be far better than the bin width 1/T (~10 % of f here)
    f = 0.2
    t, x = _signal(f=f, periods=10.3)
    r = signals.spectral_peak(t, x, pad=1)
    assert r["resolution"] == pytest.approx(f / 10.3, rel=1e-2)
    assert abs(r["frequency"] - f) < 0.01 * r["resolution"]
    assert r["amplitude"] == pytest.approx(0.33, rel=0.02)


@pytest.mark.parametrize("kw", [dict(), dict(noise=0.1, drift=0.002, uneven=True)])
def test_zero_crossings_give_the_period(kw):
    f = 0.1643
    t, x = _signal(**kw)
    tc = signals.crossing_times(t, x)
    assert tc.size in (11, 12)  # one per period, none added by the noise
    fz = (tc.size - 1) / (tc[-1] - tc[0])
    tol = 1e-3 if not kw else 3e-3  # noise jitters each crossing (10 % noise: ~0.5 % of a period)
    assert abs(fz / f - 1.0) < tol


def test_cycle_stats_and_window_stats():
    t, x = _signal(periods=12.0, per_period=200)
    cs = signals.cycle_stats(t, x)
    assert cs["period"] == pytest.approx(np.full(cs["period"].size, 1 / 0.1643), rel=1e-3)
    assert cs["amplitude"] == pytest.approx(np.full(cs["period"].size, 0.33), rel=1e-3)
    p = signals.periodicity(cs)
    assert p["period_variation"] < 1e-3 and p["amplitude_variation"] < 1e-3
    w = signals.whole_cycle_window(t, x, 10.0)
    assert w is not None and w[2] >= 9
    s = signals.window_stats(t, x, w[0], w[1])
    # over whole periods: mean of A sin is 0, rms is A / sqrt(2)
    assert s["mean"] == pytest.approx(1.34, abs=1e-4)
    assert s["rms"] == pytest.approx(0.33 / math.sqrt(2.0), rel=1e-3)
    assert s["amplitude"] == pytest.approx(0.33, rel=1e-3)


def test_periodicity_flags_a_growing_signal():
    f = 0.15
    t = np.linspace(0, 12 / f, 1200)
    x = np.exp(0.02 * t) * np.sin(2 * np.pi * f * t)
    p = signals.periodicity(signals.cycle_stats(t, x))
    assert p["amplitude_variation"] > 0.2 and p["amplitude_trend"] > 0.1
    # a settling signal: the settled part starts after the growth
    x2 = np.tanh(0.05 * t) * np.sin(2 * np.pi * f * t)
    ts = signals.settled_start(t, x2, tol=0.02)
    assert ts is not None and ts > 30.0  # tanh(0.05 t) is within 2 % of 1 only for t > ~46


def test_bad_input():
    with pytest.raises(ValueError, match="increase"):
        signals.spectral_peak([0.0, 1.0, 1.0, 2.0, 3.0], [0, 1, 0, 1, 0])
    with pytest.raises(ValueError, match="at least 4"):
        signals.spectral_peak([0.0, 1.0], [0.0, 1.0])
