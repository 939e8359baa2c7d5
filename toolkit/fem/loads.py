"""Loads and their nodal force vector: :class:`Traction` (uniform or
linearly varying along a coordinate, so pure bending of a bar end is one
load), :class:`Pressure` (normal, also linearly varying) and
:class:`PointLoad` are plain records, resolved against a mesh and its named
edges and points by :func:`load_vector` (consistent nodal forces
``f_a = ∫ N_a t w ds`` with ``w`` the thickness or ``2 π r``)."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from toolkit.errors import InputError
from toolkit.fem.edges import edge_quadrature
from toolkit.fem.locations import edge_of, nodes_of

__all__ = ["Traction", "Pressure", "PointLoad", "load_vector"]


def _axis(along) -> int:
    if along in (0, "x", "r"):
        return 0
    if along in (1, "y", "z"):
        return 1
    raise InputError(f"'along' must be 0/'x'/'r' or 1/'y'/'z', got {along!r}")


@dataclass(frozen=True)
class Traction:
    """Surface traction on a named edge (force per area):
    ``t(x) = value + gradient * (x[along] - origin)``.

    ``value`` and ``gradient`` are 2-vectors; ``gradient=None`` gives a
    uniform traction.  Pure bending of a bar end at ``x = L`` with depth
    ``h`` centred on ``y = 0`` and surface stress ``σ_b`` is
    ``Traction("end", (0, 0), gradient=(2 σ_b / h, 0), along="y")``.
    """

    edge: object
    value: tuple = (0.0, 0.0)
    gradient: tuple | None = None
    along: object = 1
    origin: float = 0.0


@dataclass(frozen=True)
class Pressure:
    """Normal pressure on a named edge, positive pushing into the body
    (traction ``-p n`` with ``n`` the outward normal):
    ``p(x) = value + gradient * (x[along] - origin)``."""

    edge: object
    value: float = 0.0
    gradient: float = 0.0
    along: object = 1
    origin: float = 0.0


@dataclass(frozen=True)
class PointLoad:
    """Concentrated force ``(fx, fy)`` at one node: a node row number, a
    named point, or coordinates ``(x, y)`` of a node (matched within 1e-9 of
    the model size)."""

    where: object
    force: tuple = (0.0, 0.0)


def load_vector(mesh, loads, edges, points, analysis, thickness) -> np.ndarray:
    """Nodal forces (n, 2) of ``loads`` on ``mesh``; ``edges`` and ``points``
    resolve the names the loads use."""
    f = np.zeros((mesh.nnodes, 2))
    for i, ld in enumerate(loads):
        label = f"load {i} ({type(ld).__name__})"
        if isinstance(ld, (Traction, Pressure)):
            e = edge_of(ld.edge, edges, label)
            ax = _axis(ld.along)
            for g in edge_quadrature(mesh, e, label=label):
                x = g["x"]
                c = x[..., ax] - float(ld.origin)
                if isinstance(ld, Traction):
                    t0 = np.asarray(ld.value, dtype=float)
                    if t0.shape != (2,):
                        raise InputError(f"{label}: value must be a 2-vector (tx, ty), got {ld.value!r}")
                    t = np.broadcast_to(t0, x.shape).copy()
                    if ld.gradient is not None:
                        gr = np.asarray(ld.gradient, dtype=float)
                        if gr.shape != (2,):
                            raise InputError(f"{label}: gradient must be a 2-vector, got {ld.gradient!r}")
                        t = t + c[..., None] * gr
                else:
                    p = float(ld.value) + float(ld.gradient) * c
                    t = -p[..., None] * g["normal"]
                if not np.isfinite(t).all():
                    raise InputError(f"{label}: non-finite traction")
                w = g["ds"] * (2 * np.pi * x[..., 0] if analysis == "axisymmetric" else thickness)
                fe = np.einsum("gk,mgi,mg->mki", g["N"], t, w)
                np.add.at(f, g["conn"].ravel(), fe.reshape(-1, 2))
        elif isinstance(ld, PointLoad):
            node = nodes_of(ld.where, mesh, {}, points, label)
            if node.size != 1:
                raise InputError(f"{label}: a point load acts on one node, {ld.where!r} names {node.size}")
            F = np.asarray(ld.force, dtype=float)
            if F.shape != (2,) or not np.isfinite(F).all():
                raise InputError(f"{label}: force must be a finite 2-vector, got {ld.force!r}")
            f[node[0]] += F
        else:
            raise InputError(f"{label}: unknown load type; use Traction, Pressure or PointLoad")
    return f
