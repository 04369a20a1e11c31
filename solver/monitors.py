"""What a run records between snapshots: one history row per sample, and running averages.

A sample evaluates the residual ``R(U)`` once (so the wall fluxes in
``op.Fc`` belong to the sampled state) and records

* ``forces/<group>/<coefficient>``: :class:`solver.forces.ForceIntegrator`
  (group ``total``, plus one per tag when several walls are monitored);
* ``residual/<variable>``: root mean square of ``dU/dt`` over all solution
  points, per conserved variable (``rho``, ``rhou``, ``rhov``, ``rhoE``);
* ``bounds/rho_min``, ``rho_max``, ``p_min``, ``p_max`` over the solution points;
* ``probes/<k>/<variable>``: ``rho, u, v, p`` at probe ``k``, from the element
  polynomial (:class:`solver.probes.PointSampler`).

The running averages weight each state by the time step that led to it
(``S += h q`` after every step whose end lies after ``average_from``), for
``q = (rho, u, v, p)`` and ``q^2``; snapshots store the sums and the averaged
time, so mean ``= S1 / T`` and variance ``= S2 / T - mean^2``.
"""
from __future__ import annotations

import math

import numpy as np

from .forces import COEFFICIENTS, ForceIntegrator
from .kernels import monitor as _km
from .probes import PointSampler

__all__ = ["Monitor", "RunningAverage", "RESIDUAL_NAMES", "BOUND_NAMES", "PROBE_NAMES", "INNER_NAMES"]

RESIDUAL_NAMES = ("rho", "rhou", "rhov", "rhoE")
BOUND_NAMES = ("rho_min", "rho_max", "p_min", "p_max")
PROBE_NAMES = ("rho", "u", "v", "p")
#: dual time: keys of DualTimeStepper.last_stats recorded per sample
INNER_NAMES = ("iterations", "residual0", "residual", "rhs", "coarse_rhs", "converged")


class Monitor:
    """Builds the history columns of a run and fills one row per sample.

    Parameters
    ----------
    op : FROperator
    ref : dict
        Free stream (rho, u, v, angle_rad, length).
    walls : list of str
        Tags whose forces are recorded (may be empty).
    length : float
        Reference length of the coefficients.
    moment_point : (2,) sequence
    probes : (np, 2) array_like
    inner : bool
        Dual time stepping: add the columns of the inner iteration of the
        step before each sample (:data:`INNER_NAMES`).
    """

    def __init__(self, op, ref: dict, walls, length: float, moment_point=(0.0, 0.0), probes=(), inner=False):
        self.op = op
        self.gamma = op.gamma
        q_inf = 0.5 * ref["rho"] * (ref["u"] ** 2 + ref["v"] ** 2)
        self.forces = (ForceIntegrator(op, walls, length, moment_point, ref.get("angle_rad", 0.0), q_inf)
                       if walls else None)
        self.sampler = PointSampler(op.metrics.geom, op.basis.x, np.asarray(probes, dtype=float).reshape(-1, 2))
        cols = ["step", "time", "wall_time", "dt"]
        if self.forces is not None:
            cols += [f"forces/{g}/{c}" for g in self.forces.group_names for c in COEFFICIENTS]
        cols += [f"residual/{v}" for v in RESIDUAL_NAMES]
        cols += [f"bounds/{b}" for b in BOUND_NAMES]
        cols += [f"probes/{k}/{v}" for k in range(len(self.sampler)) for v in PROBE_NAMES]
        self.inner = bool(inner)
        if self.inner:
            cols += [f"inner/{v}" for v in INNER_NAMES]
        self.columns = cols
        self.attrs = {
            "walls": [str(w) for w in walls],
            "reference_length": float(length),
            "moment_point": np.asarray(moment_point, dtype=float),
            "dynamic_pressure": float(q_inf),
            "angle_rad": float(ref.get("angle_rad", 0.0)),
            "probe_points": self.sampler.points,
            "probe_elements": self.sampler.elements,
            "residual_definition": "rms over solution points of dU/dt, per conserved variable",
            "inner_definition": "dual time: of the physical step that ended at the sample, inner iterations "
                                "(cycles), weighted rms unsteady residual at the start (after the predictor) and "
                                "at the end, fine-level and coarse-level residual evaluations, 1 if converged",
            "force_definition": "pressure part: inviscid part of the common wall flux; viscous part: -BR2 "
                                "viscous wall flux; coefficients on 0.5 rho U^2 and the reference length",
        }
        self._R = np.empty(op.shape)
        self._bounds = np.empty(4)
        self._where = np.zeros(4, dtype=np.int64)

    def sample(self, t: float, U: np.ndarray, step: int, wall: float, dt: float, inner=None) -> np.ndarray:
        """One history row (column order of :attr:`columns`); evaluates ``R(U)`` once.

        ``inner`` is the dual-time stepper's ``last_stats`` (dict; empty or
        None before the first step: NaN entries).
        """
        R = self.op.rhs(t, U, self._R)
        row = [float(step), float(t), float(wall), float(dt)]
        if self.forces is not None:
            co = self.forces.coefficients()
            for g in self.forces.group_names:
                row += [co[g][c] for c in COEFFICIENTS]
        row += list(np.sqrt(np.mean(R * R, axis=(0, 1, 2))))
        _km.scan_state(U, self.gamma, self._bounds, self._where)
        row += list(self._bounds)
        if len(self.sampler):
            row += list(self.sampler.primitive(U, self.gamma).reshape(-1))
        if self.inner:
            st = inner or {}
            row += [float(st.get(k, math.nan)) for k in INNER_NAMES]  # converged: bool -> 1.0 / 0.0
        return np.asarray(row, dtype=float)

    def residual_rms(self) -> float:
        """RMS over all components of the residual of the last sample."""
        return float(np.sqrt(np.mean(self._R * self._R)))


class RunningAverage:
    """Time-weighted sums of the primitive variables and their squares.

    Parameters
    ----------
    shape : tuple
        Solution shape (ne, n, n, 4).
    gamma : float
    start : float
        Simulation time from which states are averaged.
    """

    def __init__(self, shape, gamma: float, start: float):
        self.gamma = float(gamma)
        self.start = float(start)
        self.S1 = np.zeros(shape)
        self.S2 = np.zeros(shape)
        self.time = 0.0

    def add(self, U: np.ndarray, t0: float, t1: float) -> None:
        """Account for the step ``t0 -> t1`` that produced ``U`` (the part after ``start``)."""
        h = t1 - max(t0, self.start)
        if h > 0.0:
            _km.accumulate_moments(U, self.gamma, h, self.S1, self.S2)
            self.time += h

    def to_extra(self) -> dict:
        """Values stored in a snapshot's ``/extra``."""
        return {"average_from": self.start, "average_time": self.time, "average_sum": self.S1,
                "average_sum_sq": self.S2}

    def load(self, extra: dict, time: float, where: str) -> None:
        """Restore the sums from the extra values of a snapshot at ``time`` (resume)."""
        if "average_sum" not in extra:
            if time <= self.start:
                return
            raise ValueError(f"{where}: the snapshot holds no running averages, but [monitor] average_from is "
                             "set; averages would be incomplete")
        s1 = np.asarray(extra["average_sum"], dtype=float)
        s2 = np.asarray(extra["average_sum_sq"], dtype=float)
        if s1.shape != self.S1.shape or s2.shape != self.S2.shape:
            raise ValueError(f"{where}: running averages of shape {s1.shape} do not fit the solution {self.S1.shape}")
        if float(extra.get("average_from", self.start)) != self.start:
            raise ValueError(f"{where}: averages were started at t = {extra.get('average_from')}, the case says "
                             f"average_from = {self.start}")
        self.S1[...] = s1
        self.S2[...] = s2
        self.time = float(extra.get("average_time", 0.0))

    def mean(self) -> np.ndarray | None:
        """Mean of (rho, u, v, p), (ne, n, n, 4), or None before the averaging starts."""
        return self.S1 / self.time if self.time > 0 else None
