"""Forces and moments on wall boundaries, split into pressure and viscous parts.

After :meth:`solver.operator.FROperator.rhs` the face buffer
``op.Fc[e, f, k, :]`` on a boundary face holds the common normal flux of the
scheme times the face length element, outward from the fluid element, i.e.
pointing into the body.  Its momentum components are

    Fc[e, f, k, 1:3] = (p n - tau . n) |nS|,

the force per unit reference length that the fluid exerts on the wall at
flux point ``k`` (``n`` the unit normal out of the fluid, ``|nS|`` the length
element ``op.metrics.mag``).  With viscosity, ``op.Fvf[e, f, k, 1:3]`` is the
viscous part ``(tau . n) |nS|`` of the same flux, so

    pressure part  f_p = Fc[1:3] + Fvf[1:3],     viscous part  f_v = -Fvf[1:3].

The "pressure" part is therefore the inviscid part of the scheme's own wall
flux (the Riemann flux between the interior trace and the wall's ghost state),
not the trace pressure ``p(U_f) n``: the two agree to the discretisation error
(the Roe or Rusanov dissipation of the small normal velocity that a weakly
imposed wall leaves), and the flux form is the one that balances the discrete
momentum budget of the scheme.  :func:`wall_pressure` gives the trace
pressure for Cp distributions and for comparison.

The integrals along each face use the 1D quadrature weights of the solution
points (``op.basis.w``; flux point ``k`` of every face sits at the 1D point
``x_k`` or its mirror, and the weights are symmetric), the length element
being already in the flux.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["WALL_TYPES", "COEFFICIENTS", "surface_loads", "ForceIntegrator", "wall_pressure", "wall_tags"]

#: boundary-condition types whose faces carry a force (the default wall set of [monitor])
WALL_TYPES = ("slip-wall", "noslip-wall", "isothermal-wall")

#: names of the coefficients of one wall group, in history order
COEFFICIENTS = ("cd", "cl", "cm", "cd_pressure", "cd_viscous", "cl_pressure", "cl_viscous", "cm_pressure",
                "cm_viscous", "cx", "cy", "cx_pressure", "cx_viscous", "cy_pressure", "cy_viscous")


def wall_tags(boundaries: dict) -> list[str]:
    """Tags whose condition is a wall type, in the given order.

    Parameters
    ----------
    boundaries : dict
        ``tag -> condition name`` or ``tag -> object with .type``.
    """
    out = []
    for tag, spec in boundaries.items():
        name = getattr(spec, "type", spec)
        if isinstance(name, tuple):
            name = name[0]
        if name in WALL_TYPES:
            out.append(tag)
    return out


def surface_loads(traction: np.ndarray, xyf: np.ndarray, w: np.ndarray, point=(0.0, 0.0)):
    """Force and moment of tractions given at the flux points of boundary faces.

    Parameters
    ----------
    traction : (nb, n, 2) array
        Force per unit reference length along each face at its flux points,
        already multiplied by the face length element ``|nS|``.
    xyf : (nb, n, 2) array
        Flux-point coordinates.
    w : (n,) array
        1D quadrature weights on [-1, 1].
    point : (2,) sequence
        Moment reference point.

    Returns
    -------
    force : (2,) array
        ``sum_faces sum_k w_k t_k``.
    moment : float
        z component, counter-clockwise positive:
        ``sum w_k [(x_k - x0) t_y,k - (y_k - y0) t_x,k]``.
    """
    traction = np.asarray(traction, dtype=float)
    xyf = np.asarray(xyf, dtype=float)
    w = np.asarray(w, dtype=float)
    if traction.ndim != 3 or traction.shape[-1] != 2 or xyf.shape != traction.shape:
        raise ValueError(f"traction and flux-point coordinates must both be (nb, n, 2), got {traction.shape} "
                         f"and {xyf.shape}")
    if w.shape != (traction.shape[1],):
        raise ValueError(f"need {traction.shape[1]} quadrature weights, got shape {w.shape}")
    force = np.einsum("k,bkd->d", w, traction)
    dx = xyf[..., 0] - float(point[0])
    dy = xyf[..., 1] - float(point[1])
    moment = float(np.einsum("k,bk->", w, dx * traction[..., 1] - dy * traction[..., 0]))
    return force, moment


@dataclass
class _Group:
    name: str
    faces: np.ndarray  # (nb, 2) element, face


class ForceIntegrator:
    """Force coefficients of wall groups from the operator's face fluxes.

    Parameters
    ----------
    op : FROperator
        Its last :meth:`rhs` call defines the fluxes that are integrated.
    tags : list of str
        Wall tags to integrate.  Their sum is the group ``total``; with more
        than one tag each tag is also a group of its own.
    length : float
        Reference length ``L`` of the coefficients (mesh units).
    moment_point : (2,) sequence
        Point about which the moment is taken.
    angle : float
        Free-stream direction (radians from the x axis): drag is along
        ``(cos a, sin a)``, lift along ``(-sin a, cos a)``.
    q_inf : float
        Free-stream dynamic pressure ``rho U^2 / 2`` (0.5 in solver units).

    Notes
    -----
    ``C_d = F . e_d / (q L)``, ``C_l = F . e_l / (q L)`` (wind axes),
    ``C_x = F_x / (q L)``, ``C_y = F_y / (q L)`` (body axes = mesh axes) and
    ``C_m = M_z / (q L^2)`` with the moment counter-clockwise positive (the
    same in both axes; for a section in a flow along +x the usual nose-up
    pitching moment is ``-C_m``).  Each is given in total and split into the
    pressure and viscous parts defined in the module docstring.
    """

    def __init__(self, op, tags, length: float = 1.0, moment_point=(0.0, 0.0), angle: float = 0.0,
                 q_inf: float = 0.5):
        tags = list(tags)
        if not tags:
            raise ValueError("force integration needs at least one wall tag")
        for t in tags:
            if t not in op.mesh.boundary_faces:
                from .registry import closest

                raise ValueError(f"force integration: '{t}' is not a boundary tag of the mesh"
                                 f"{closest(t, list(op.mesh.boundary_faces))}; mesh tags: "
                                 f"{', '.join(op.mesh.boundary_faces)}")
        if not (length > 0 and math.isfinite(length)):
            raise ValueError(f"force integration: reference length must be > 0, got {length}")
        if not (q_inf > 0 and math.isfinite(q_inf)):
            raise ValueError(f"force integration: dynamic pressure must be > 0, got {q_inf}")
        self.op = op
        self.tags = tags
        self.length = float(length)
        self.point = (float(moment_point[0]), float(moment_point[1]))
        self.angle = float(angle)
        self.q_inf = float(q_inf)
        faces = {t: np.asarray(op.mesh.boundary_faces[t], dtype=np.int64).reshape(-1, 2) for t in tags}
        self.groups = [_Group("total", np.concatenate([faces[t] for t in tags]))]
        if len(tags) > 1:
            self.groups += [_Group(t, faces[t]) for t in tags]

    @property
    def group_names(self) -> list[str]:
        return [g.name for g in self.groups]

    def tractions(self, faces: np.ndarray):
        """Pressure and viscous tractions (nb, n, 2) on ``faces`` from the last residual."""
        op = self.op
        tot = op.Fc[faces[:, 0], faces[:, 1], :, 1:3]
        if op.viscous:
            fv = -op.Fvf[faces[:, 0], faces[:, 1], :, 1:3]
        else:
            fv = np.zeros_like(tot)
        return tot - fv, fv

    def loads(self) -> dict:
        """Dimensional loads of every group: ``name -> (F_p (2,), F_v (2,), M_p, M_v)``."""
        op = self.op
        w = op.basis.w
        out = {}
        for g in self.groups:
            tp, tv = self.tractions(g.faces)
            xyf = op.metrics.xyf[g.faces[:, 0], g.faces[:, 1]]
            fp, mp = surface_loads(tp, xyf, w, self.point)
            fv, mv = surface_loads(tv, xyf, w, self.point)
            out[g.name] = (fp, fv, mp, mv)
        return out

    def coefficients(self) -> dict:
        """``group -> {coefficient name -> value}`` (names in :data:`COEFFICIENTS`)."""
        qL = self.q_inf * self.length
        ca, sa = math.cos(self.angle), math.sin(self.angle)
        out = {}
        for name, (fp, fv, mp, mv) in self.loads().items():
            c = {}
            for part, f, m in (("pressure", fp, mp), ("viscous", fv, mv)):
                c[f"cd_{part}"] = (f[0] * ca + f[1] * sa) / qL
                c[f"cl_{part}"] = (-f[0] * sa + f[1] * ca) / qL
                c[f"cm_{part}"] = m / (qL * self.length)
                c[f"cx_{part}"] = f[0] / qL
                c[f"cy_{part}"] = f[1] / qL
            for k in ("cd", "cl", "cm", "cx", "cy"):
                c[k] = c[f"{k}_pressure"] + c[f"{k}_viscous"]
            out[name] = {k: float(c[k]) for k in COEFFICIENTS}
        return out


def wall_pressure(op, tag: str):
    """Trace pressure at the flux points of the faces of ``tag``.

    Returns
    -------
    xy : (nb, n, 2) flux-point coordinates
    p : (nb, n) pressure ``(gamma - 1)(rho E - |rho u|^2 / (2 rho))`` of the
        interior trace ``op.Uf`` (current after :meth:`rhs`)
    """
    faces = np.asarray(op.mesh.boundary_faces[tag], dtype=np.int64).reshape(-1, 2)
    Uf = op.Uf[faces[:, 0], faces[:, 1]]
    r = Uf[..., 0]
    p = (op.gamma - 1.0) * (Uf[..., 3] - 0.5 * (Uf[..., 1] ** 2 + Uf[..., 2] ** 2) / r)
    return op.metrics.xyf[faces[:, 0], faces[:, 1]], p
