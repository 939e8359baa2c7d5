"""Zienkiewicz–Zhu error estimate (Zienkiewicz & Zhu 1987, Int. J. Numer.
Meth. Eng. 24, 337-357; with SPR, 1992, IJNME 33, 1331-1364).

The error of the finite-element stress ``σ_h`` is estimated by its distance
from a recovered continuous stress ``σ*``:

    ||e||_K^2 = ∫_K (σ* - σ_h)^T W (σ* - σ_h) dΩ

per element K, with ``W = I`` (the L2 norm) or ``W = C``, the elastic
compliance (the energy norm, ``∫ e^T D^{-1} e``).  The global relative error
is ``η = ||e|| / sqrt(||σ_h||^2 + ||e||^2)``, ``||e||^2 = Σ_K ||e||_K^2``
(ZZ 1987).  Both integrals use a Gauss rule of the element exact for the
integrand on straight-edged elements (see :func:`indicator_rule`).
"""
from __future__ import annotations

import numpy as np

from toolkit.errors import InputError
from toolkit.core import stress as _stress
from toolkit.core.elements import local_field_exponents, local_field_matrix, rule_of_degree
from toolkit.core.fields import GaussField, NodalField, RowLayout

__all__ = ["ErrorIndicator", "error_indicator", "compliance_matrix", "indicator_rule"]


def compliance_matrix(components, E, nu, plane="stress") -> np.ndarray:
    """Isotropic compliance ``C`` with ``σ^T C σ = σ:ε`` (tensor shears) in the
    order of ``components`` (a stress set of :mod:`toolkit.core.stress`).

    ``(sxx, syy, sxy)`` with ``plane="stress"``: ``1/E [[1, -ν, 0], [-ν, 1,
    0], [0, 0, 2(1+ν)]]``; with ``plane="strain"`` (``szz = ν(sxx+syy)`` not
    listed): ``(1+ν)/E [[1-ν, -ν, 0], [-ν, 1-ν, 0], [0, 0, 2]]``.  Sets with
    ``szz`` (plane strain, axisymmetric, 3D) use the 3D compliance: ``1/E``
    on the normal diagonal, ``-ν/E`` between normals, ``2(1+ν)/E`` per shear
    (Hooke's law, e.g. Timoshenko & Goodier ch. 1).
    """
    if not (np.isfinite(E) and E > 0):
        raise InputError(f"E must be > 0, got {E}")
    if not (np.isfinite(nu) and -1 < nu < 0.5):
        raise InputError(f"nu must lie in (-1, 0.5), got {nu}")
    if plane not in ("stress", "strain"):
        raise InputError(f"plane must be 'stress' or 'strain', got {plane!r}")
    kind, _ = _stress.component_set(components)
    comps = tuple(components)
    normal = {"sxx", "syy", "szz"}
    C = np.zeros((len(comps), len(comps)))
    for i, a in enumerate(comps):
        for j, b in enumerate(comps):
            if a in normal and b in normal:
                C[i, j] = 1.0 / E if a == b else -nu / E
            elif a == b:
                C[i, j] = 2.0 * (1.0 + nu) / E
    if kind == "plane" and plane == "strain":
        for i, a in enumerate(comps):
            for j, b in enumerate(comps):
                if a in normal and b in normal:
                    C[i, j] = (1 + nu) * ((1 - nu) if a == b else -nu) / E
    return C


def indicator_rule(element, npoints):
    """Rule exact for ``(σ* - σ_h)^2 det J`` on straight-edged elements:
    σ* in the element's space (degree ``p``), σ_h the local field through
    ``npoints`` values (degree ``g``), so degree ``2 max(p, g) + deg(det J)``
    (per coordinate on quads and hexes, total on simplices)."""
    _, gdeg = local_field_exponents(element.shape, npoints)
    ndeg = element.total_degree if element.is_simplex else element.degree
    return rule_of_degree(element.shape, 2 * max(ndeg, gdeg) + element.detj_degree)


class ErrorIndicator:
    """Per-element ZZ error estimate.

    Attributes
    ----------
    per_element : (cells,) ``||σ* - σ_h||_K`` over all blocks in mesh order
    per_block : dict block -> (cells,)
    error : ``||e||`` over the mesh;  norm : ``||σ_h||``
    eta : ``||e|| / sqrt(||σ_h||^2 + ||e||^2)``
    measure : ``"L2"`` or ``"energy"``
    element_ids : (cells,) the mesh's element numbers
    """

    def __init__(self, mesh, per_block, norm2_block, measure):
        self.mesh = mesh
        self.per_block = {k: np.sqrt(v) for k, v in per_block.items()}
        self.per_element = np.concatenate(list(self.per_block.values()))
        self.error = float(np.sqrt(sum(v.sum() for v in per_block.values())))
        self.norm = float(np.sqrt(sum(norm2_block.values())))
        denom = np.sqrt(self.norm**2 + self.error**2)
        self.eta = float(self.error / denom) if denom > 0 else 0.0
        self.measure = measure
        self.element_ids = np.concatenate([mesh.block(k).ids for k in self.per_block])

    def refinement_ratio(self, target_eta) -> np.ndarray:
        """``ξ_K = ||e||_K / ē`` with the permissible element error
        ``ē = target_eta * sqrt((||σ_h||^2 + ||e||^2) / cells)`` (ZZ 1987,
        equal-error criterion): elements with ``ξ_K > 1`` need refining."""
        if not (0 < target_eta < 1):
            raise InputError(f"target_eta must lie in (0, 1), got {target_eta}")
        ebar = target_eta * np.sqrt((self.norm**2 + self.error**2) / len(self.per_element))
        return self.per_element / ebar

    def __repr__(self):
        i = int(np.argmax(self.per_element))
        return (f"ErrorIndicator({self.measure} norm: eta = {100 * self.eta:.3g} %, ||e|| = {self.error:.4g}, "
                f"||s_h|| = {self.norm:.4g}; largest at element {int(self.element_ids[i])} "
                f"({self.per_element[i]:.3g}) of {len(self.per_element)})")

    def plot(self, ax=None, quantity="error", cmap="viridis", edgecolor="none", colorbar=True, unit="MPa",
             length_unit="mm"):
        """Map of the per-element error over a 2D mesh (cells drawn as their
        corner polygons).  ``quantity``: ``"error"`` (``||e||_K``) or
        ``"density"`` (``||e||_K / sqrt(area_K)``, independent of element
        size).  Returns the axes (drawn by :func:`toolkit.report.plots.plot_indicator`)."""
        from toolkit.report.plots import plot_indicator

        return plot_indicator(self, ax, quantity, cmap, edgecolor, colorbar, unit, length_unit)


def error_indicator(field: GaussField, recovered: NodalField, E=None, nu=None, plane="stress",
                    compliance=None, axisymmetric=False) -> ErrorIndicator:
    """Zienkiewicz–Zhu error estimate of ``field`` against ``recovered``.

    Parameters
    ----------
    field : GaussField — the finite-element stress σ_h
    recovered : NodalField — σ* (e.g. ``recover_spr(field)`` or ``project_l2(field)``),
        on the same mesh with the same components (any order)
    E, nu, plane : give E and ν for the energy norm with the isotropic
        compliance (:func:`compliance_matrix`); without them the L2 norm.
    compliance : (components, components) matrix to use instead (symmetric
        positive definite, in the order of ``field.components``).
    axisymmetric : integrate over the body of revolution, ``dΩ = 2π x dA``
        (x the radius).

    Integration: with the element's Gauss rule exact for the integrand on
    straight-edged elements (:func:`indicator_rule`; e.g. quad4 2x2, quad8
    3x3, tri3 3 points, tri6 6 points), σ_h there from each element's local
    field (the data itself where the rule is the field's own), σ* as
    ``Σ N_a σ*_a`` with the element's shape functions.  (A one-point rule
    would sample σ* - σ_h only at the centroid, where it nearly vanishes.)
    """
    if not isinstance(field, GaussField):
        raise InputError("error_indicator needs the finite-element stress as a GaussField")
    if not isinstance(recovered, NodalField):
        raise InputError("error_indicator needs the recovered stress as a NodalField")
    mesh = field.mesh
    if recovered.mesh is not mesh:
        raise InputError("the recovered field belongs to another mesh than the Gauss field")
    if set(recovered.components) != set(field.components):
        raise InputError(f"components differ: field {field.components}, recovered {recovered.components}")
    order = [recovered.components.index(c) for c in field.components]
    nc = field.ncomponents
    if compliance is not None and (E is not None or nu is not None):
        raise InputError("give either compliance or E and nu, not both")
    if compliance is not None:
        W = np.asarray(compliance, dtype=float)
        if W.shape != (nc, nc) or not np.allclose(W, W.T, rtol=1e-10, atol=0):
            raise InputError(f"compliance must be a symmetric {nc}x{nc} matrix for {field.components}")
        if np.linalg.eigvalsh(W).min() <= 0:
            raise InputError("compliance must be positive definite")
        measure = "energy"
    elif E is not None or nu is not None:
        if E is None or nu is None:
            raise InputError("the energy norm needs both E and nu")
        W = compliance_matrix(field.components, E, nu, plane)
        measure = "energy"
    else:
        W = None
        measure = "L2"
    layout = RowLayout(mesh, recovered)
    vals = recovered.values[:, order]
    err2, nrm2 = {}, {}
    for b in mesh.blocks:
        et = b.element
        pts = field.points[b.name]
        V = field.values[b.name]
        rule = indicator_rule(et, len(pts))
        if not (rule.npoints == len(pts) and np.allclose(rule.points, pts, atol=1e-13)):
            V = np.matmul(local_field_matrix(et, pts, rule.points), V)
        g = mesh.geometry(b.name, rule)
        dV = g.dV_cq * (2 * np.pi * g.x_cqi[..., 0] if axisymmetric else 1.0)
        if axisymmetric and np.any(g.x_cqi[..., 0] < 0):
            raise InputError(f"block {b.name}: axisymmetric integration needs x (the radius) >= 0")
        rows = layout.lookup(b.cells, b.regions[:, None])                    # (c, k)
        star = np.einsum("qk,cka->cqa", g.N_qk, vals[rows])
        diff = star - V
        if W is None:
            e2 = np.einsum("cqa,cqa->cq", diff, diff)
            n2 = np.einsum("cqa,cqa->cq", V, V)
        else:
            e2 = np.einsum("cqa,ab,cqb->cq", diff, W, diff)
            n2 = np.einsum("cqa,ab,cqb->cq", V, W, V)
        err2[b.name] = np.einsum("cq,cq->c", dV, e2)
        nrm2[b.name] = float(np.einsum("cq,cq->", dV, n2))
    return ErrorIndicator(mesh, err2, nrm2, measure)
