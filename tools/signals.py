"""Analysis of force histories: frequency, whole cycles, statistics, periodicity.

Samples may be unevenly spaced in time (the time step of an explicit run
changes with the state); everything here works from ``(t, x)`` pairs.

Frequency, two independent ways:

* :func:`spectral_peak`: the signal is resampled on a uniform grid (cubic
  spline), a Hann window is applied after removing its least-squares line,
  and the largest bin of the zero-padded FFT is refined between its
  neighbours by the frequency whose Hann-weighted least-squares fit
  ``a cos + b sin + c + d t`` leaves the smallest residual (bounded scalar
  minimisation, scipy): the windowed spectral peak with the mean, a linear
  drift and the negative-frequency image accounted for, so it is unbiased
  for a sinusoid even over 3 cycles;
* :func:`crossing_times`: upward crossings of the signal through its local
  mean, with hysteresis (a crossing counts only after the signal has been
  below ``-h`` and then reaches ``+h``, ``h`` a fraction of its standard
  deviation) so that noise cannot add crossings; each crossing time is refined
  by a least-squares line through the samples within 1/20 of a period.  The
  local mean is the broken line through the means over whole cycles
  (iterated with the crossings), so a drift or a start-up transient does not
  shift the crossings.  The mean period is
  ``(t_last - t_first) / (number of cycles)``.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["resample_uniform", "spectral_peak", "crossing_times", "cycles", "cycle_stats", "whole_cycle_window",
           "window_stats", "periodicity", "settled_start"]


def _trapz(y, x) -> float:
    """Trapezoidal rule (numpy renamed trapz to trapezoid)."""
    y = np.asarray(y, dtype=float)
    x = np.asarray(x, dtype=float)
    return float(np.sum(0.5 * (y[1:] + y[:-1]) * np.diff(x)))


def _check(t, x):
    t = np.asarray(t, dtype=float)
    x = np.asarray(x, dtype=float)
    if t.ndim != 1 or t.shape != x.shape:
        raise ValueError(f"time and signal must be 1D arrays of equal length, got {t.shape} and {x.shape}")
    if t.size < 4:
        raise ValueError(f"need at least 4 samples, got {t.size}")
    if np.any(np.diff(t) <= 0):
        raise ValueError("sample times must increase strictly")
    return t, x


def resample_uniform(t, x, n: int | None = None):
    """Cubic-spline resampling on ``n`` equispaced times spanning ``[t0, t1]`` (default: as many as samples).

    Returns
    -------
    tu, xu : (n,) arrays
    """
    from scipy.interpolate import CubicSpline

    t, x = _check(t, x)
    n = t.size if n is None else int(n)
    tu = np.linspace(t[0], t[-1], n)
    if np.allclose(np.diff(t), (t[-1] - t[0]) / (t.size - 1), rtol=1e-9, atol=0.0) and n == t.size:
        return tu, x.copy()
    return tu, CubicSpline(t, x)(tu)


def _detrend(t, x):
    A = np.stack([np.ones_like(t), t - t.mean()], axis=1)
    coef, *_ = np.linalg.lstsq(A, x, rcond=None)
    return x - A @ coef


def _fit_energy(tt, y, w, f):
    """Weighted least-squares fit of ``a cos + b sin + c + d t`` at frequency ``f``: amplitude and residual."""
    ph = 2.0 * np.pi * f * tt
    A = np.stack([np.cos(ph), np.sin(ph), np.ones_like(tt), tt - tt.mean()], axis=1)
    sw = np.sqrt(w)
    coef, *_ = np.linalg.lstsq(A * sw[:, None], y * sw, rcond=None)
    r = (y - A @ coef) * sw
    return float(np.hypot(coef[0], coef[1])), float(r @ r)


def spectral_peak(t, x, pad: int = 8, fmin: float = 0.0) -> dict:
    """Dominant frequency of a signal.

    Parameters
    ----------
    t, x : (N,) arrays
        Sample times (increasing) and values.
    pad : int
        Zero-padding factor of the coarse FFT.
    fmin : float
        Frequencies below this are ignored (e.g. residual drift).

    Returns
    -------
    dict
        ``frequency``, ``amplitude`` (of the fitted sinusoid), ``resolution``
        (``1 / T``, the bin width without padding), ``freqs`` and ``power``
        (the padded one-sided spectrum of the windowed, detrended signal, for plots).

    Notes
    -----
    The coarse peak is the largest bin of the zero-padded FFT of the Hann-windowed
    signal after removing its least-squares line.  Between the two neighbouring
    bins the frequency is then refined by minimising, with the same Hann weights
    ``w_n``, the residual of the least-squares fit
    ``x_n ~ a cos(2 pi f t_n) + b sin(2 pi f t_n) + c + d t_n`` (bounded scalar
    minimisation, scipy).  Its minimum is the peak of the windowed spectrum with
    the mean, a linear drift and the negative-frequency image of the sinusoid
    accounted for, which a plain windowed transform leaves as a bias of order
    1 / (number of cycles)^2 on short records.
    """
    from scipy.optimize import minimize_scalar

    tu, xu = resample_uniform(t, x)
    n = tu.size
    dt = (tu[-1] - tu[0]) / (n - 1)
    y = _detrend(tu, xu)
    w = np.hanning(n)
    yw = y * w
    m = int(2 ** math.ceil(math.log2(max(pad, 1) * n)))
    spec = np.fft.rfft(yw, m)
    freqs = np.fft.rfftfreq(m, dt)
    power = np.abs(spec) ** 2
    ok = freqs > max(fmin, 0.0)
    if not np.any(ok):
        raise ValueError("no frequency above fmin in the spectrum")
    k = int(np.argmax(np.where(ok, power, -1.0)))
    df = freqs[1] - freqs[0]
    tt = tu - tu[0]
    lo, hi = max(freqs[k] - df, df * 1e-3), freqs[k] + df
    res = minimize_scalar(lambda f: _fit_energy(tt, xu, w, f)[1], bounds=(lo, hi), method="bounded",
                          options={"xatol": 1e-10 * freqs[k] + 1e-300})
    f = float(res.x)
    amp = _fit_energy(tt, xu, w, f)[0]
    return {"frequency": f, "amplitude": float(amp), "resolution": 1.0 / (tu[-1] - tu[0]), "freqs": freqs,
            "power": power}


def crossing_times(t, x, period: float | None = None, hysteresis: float = 0.3) -> np.ndarray:
    """Times of the upward crossings of the detrended signal through zero.

    Parameters
    ----------
    t, x : (N,) arrays
    period : float, optional
        Rough period, for the width of the refining fit (default: from
        :func:`spectral_peak`).
    hysteresis : float
        ``h`` in units of the signal's standard deviation.

    Returns
    -------
    (m,) array of crossing times.
    """
    t, x = _check(t, x)
    if period is None:
        period = 1.0 / spectral_peak(t, x)["frequency"]
    y = _detrend(t, x)
    tc = _crossings(t, y, period, hysteresis)
    # a least-squares line through a record of an oscillation picks up part of the oscillation
    # itself, and a start-up transient bends the mean; the means over whole cycles are free of
    # the oscillation, so the baseline is the broken line through them (the local mean drift),
    # and the crossings are found again above it, until they settle
    for _ in range(8):
        if tc.size < 3:
            break
        mids, means = [], []
        for a, b in zip(tc[:-1], tc[1:]):
            mids.append(0.5 * (a + b))
            means.append(_mean_between(t, x, a, b))
        if len(mids) >= 2:
            new = _crossings(t, x - _through(t, np.asarray(mids), np.asarray(means)), period, hysteresis)
        else:
            new = _crossings(t, x - means[0], period, hysteresis)
        if new.size == tc.size and np.max(np.abs(new - tc)) < 1e-9 * period:
            tc = new
            break
        tc = new
    return tc


def _through(t, xm, ym):
    """Broken line through the points (xm, ym), extended linearly beyond the first and last."""
    y = np.interp(t, xm, ym)
    lo, hi = t < xm[0], t > xm[-1]
    y[lo] = ym[0] + (t[lo] - xm[0]) * (ym[1] - ym[0]) / (xm[1] - xm[0])
    y[hi] = ym[-1] + (t[hi] - xm[-1]) * (ym[-1] - ym[-2]) / (xm[-1] - xm[-2])
    return y


def _mean_between(t, x, a, b) -> float:
    """Time average of the piecewise-linear signal over [a, b] (ends interpolated)."""
    inside = (t > a) & (t < b)
    ts = np.concatenate([[a], t[inside], [b]])
    xs = np.concatenate([[np.interp(a, t, x)], x[inside], [np.interp(b, t, x)]])
    return _trapz(xs, ts) / (b - a)


def _crossings(t, y, period, hysteresis):
    s = float(np.std(y))
    if s == 0.0:
        return np.zeros(0)
    h = hysteresis * s
    half = period / 20.0
    out = []
    armed = False
    i = 0
    last_up = None
    while i < y.size:
        if y[i] < -h:
            armed = True
            last_up = None
        elif armed:
            if y[i] >= 0.0 and y[i - 1] < 0.0:
                last_up = i
            if y[i] > h and last_up is not None:
                j = last_up
                tc = t[j - 1] + (t[j] - t[j - 1]) * (-y[j - 1]) / (y[j] - y[j - 1])
                sel = np.abs(t - tc) <= half
                if np.count_nonzero(sel) >= 3:
                    a, b = np.polyfit(t[sel] - tc, y[sel], 1)
                    if a > 0:
                        tc = tc - b / a
                out.append(tc)
                armed = False
        i += 1
    return np.asarray(out)


def cycles(t, x, period: float | None = None) -> list[tuple[int, int]]:
    """Index ranges ``[i0, i1)`` of the whole cycles between consecutive upward crossings."""
    tc = crossing_times(t, x, period)
    t = np.asarray(t, dtype=float)
    idx = np.searchsorted(t, tc)
    return [(int(a), int(b)) for a, b in zip(idx[:-1], idx[1:]) if b > a]


def cycle_stats(t, x, period: float | None = None, tc=None) -> dict:
    """Per-cycle period, mean, minimum, maximum and half peak-to-peak amplitude.

    Parameters
    ----------
    t, x : (N,) arrays
    period : float, optional
        Rough period for :func:`crossing_times`.
    tc : (m,) array, optional
        Crossing times already found (then ``period`` is not used).

    Returns
    -------
    dict of (m-1,) arrays: ``start``, ``period``, ``mean``, ``min``, ``max``, ``amplitude``
    (empty with fewer than two crossings).
    """
    t = np.asarray(t, dtype=float)
    x = np.asarray(x, dtype=float)
    tc = crossing_times(t, x, period) if tc is None else np.asarray(tc, dtype=float)
    keys = ("start", "period", "mean", "min", "max", "amplitude")
    if tc.size < 2:
        return {k: np.zeros(0) for k in keys}
    rows = []
    for a, b in zip(tc[:-1], tc[1:]):
        sel = (t >= a) & (t < b)
        xs = x[sel]
        if xs.size < 2:
            continue
        rows.append((a, b - a, _mean_between(t, x, a, b), xs.min(), xs.max(), 0.5 * (xs.max() - xs.min())))
    arr = np.array(rows).reshape(-1, 6)
    return {k: arr[:, j] for j, k in enumerate(keys)}


def whole_cycle_window(t, x, t_from: float, period: float | None = None, tc=None):
    """The span of whole cycles of ``x`` after ``t_from``: ``(t_start, t_end, n_cycles)`` or None.

    The crossings are those of the whole record (:func:`crossing_times`, or ``tc``), so a
    window that starts on a crossing keeps it.
    """
    t = np.asarray(t, dtype=float)
    x = np.asarray(x, dtype=float)
    tc = crossing_times(t, x, period) if tc is None else np.asarray(tc, dtype=float)
    tc = tc[tc >= t_from - 1e-9 * max(abs(t_from), 1.0)]
    if tc.size < 2:
        return None
    return float(tc[0]), float(tc[-1]), int(tc.size - 1)


def window_stats(t, x, t0: float, t1: float) -> dict:
    """Time-weighted mean, rms of the fluctuation, min, max and half peak-to-peak of ``x`` on ``[t0, t1]``.

    Notes
    -----
    ``mean = int x dt / T`` and ``rms = sqrt(int (x - mean)^2 dt / T)`` by the
    trapezoidal rule on the samples inside the window (with the window ends
    interpolated linearly), so uneven sampling does not bias them.
    """
    t = np.asarray(t, dtype=float)
    x = np.asarray(x, dtype=float)
    inside = (t > t0) & (t < t1)
    ts = np.concatenate([[t0], t[inside], [t1]])
    xs = np.concatenate([[np.interp(t0, t, x)], x[inside], [np.interp(t1, t, x)]])
    T = t1 - t0
    mean = float(_trapz(xs, ts) / T)
    rms = float(math.sqrt(max(_trapz((xs - mean) ** 2, ts) / T, 0.0)))
    return {"mean": mean, "rms": rms, "min": float(xs.min()), "max": float(xs.max()),
            "amplitude": float(0.5 * (xs.max() - xs.min()))}


def periodicity(stats: dict) -> dict:
    """Cycle-to-cycle variation from :func:`cycle_stats`.

    Returns
    -------
    dict
        ``cycles``, ``period_variation`` and ``amplitude_variation`` (largest
        deviation from the mean over the cycles, relative to the mean),
        ``amplitude_trend`` (relative change of the amplitude per cycle, from a
        least-squares line).
    """
    n = stats["period"].size
    if n < 2:
        return {"cycles": n, "period_variation": math.inf, "amplitude_variation": math.inf,
                "amplitude_trend": math.inf}
    P, A = stats["period"], stats["amplitude"]
    trend = np.polyfit(np.arange(n), A, 1)[0] / A.mean() if n >= 3 else (A[-1] - A[0]) / A.mean()
    return {"cycles": n, "period_variation": float(np.max(np.abs(P - P.mean())) / P.mean()),
            "amplitude_variation": float(np.max(np.abs(A - A.mean())) / A.mean()),
            "amplitude_trend": float(trend)}


def settled_start(t, x, tol: float = 0.02, min_cycles: int = 3, tc=None) -> float | None:
    """Start of the trailing run of cycles whose amplitude and period stay within ``tol`` of the last cycle's.

    Returns None when fewer than ``min_cycles`` such cycles exist.
    """
    cs = cycle_stats(t, x, tc=tc)
    n = cs["period"].size
    if n < min_cycles:
        return None
    A, P = cs["amplitude"], cs["period"]
    k = n - 1
    while k > 0 and abs(A[k - 1] - A[-1]) <= tol * A[-1] and abs(P[k - 1] - P[-1]) <= tol * P[-1]:
        k -= 1
    if n - k < min_cycles:
        return None
    return float(cs["start"][k])
