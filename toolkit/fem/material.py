"""Isotropic linear-elastic material, the three 2D analyses and their
component tables, and the assignment of materials to mesh regions.

Coordinates and components
--------------------------
* plane stress / plane strain: coordinates ``(x, y)``; strain vector
  ``(exx, eyy, gxy)`` with engineering shear ``gxy = du/dy + dv/dx``;
  stress output ``(sxx, syy, sxy, szz)`` (``szz = 0`` in plane stress,
  ``ν (sxx + syy)`` in plane strain); strain output ``(exx, eyy, gxy, ezz)``.
* axisymmetric: coordinate 0 is the radius ``r >= 0``, coordinate 1 the
  axial position ``z``; strain ``(err, ezz, grz, ehoop)`` with the hoop strain
  ``ehoop = u_r / r``; stress output ``(srr, szz, srz, shoop)`` (``shoop`` hoop).
  Every integral is over the full ring (factor ``2 π r``): point loads are
  total ring forces, reactions are totals over the circumference.
* plane problems carry a ``thickness`` (default 1): tractions are forces per
  area, point loads and reactions are forces on that thickness.

:data:`TENSOR_INDEX` maps each output component to its place ``(i, j)`` in
the 3x3 stress tensor (frame ``x, y, z`` or ``r, z, θ``), for invariants.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from toolkit.errors import InputError

__all__ = ["Material", "ANALYSES", "STRESS_COMPONENTS", "STRAIN_COMPONENTS", "TENSOR_INDEX", "materials_by_region"]

ANALYSES = ("plane_stress", "plane_strain", "axisymmetric")
STRESS_COMPONENTS = {"plane_stress": ("sxx", "syy", "sxy", "szz"),
                     "plane_strain": ("sxx", "syy", "sxy", "szz"),
                     "axisymmetric": ("srr", "szz", "srz", "shoop")}
STRAIN_COMPONENTS = {"plane_stress": ("exx", "eyy", "gxy", "ezz"),
                     "plane_strain": ("exx", "eyy", "gxy", "ezz"),
                     "axisymmetric": ("err", "ezz", "grz", "ehoop")}
TENSOR_INDEX = {"plane_stress": {"sxx": (0, 0), "syy": (1, 1), "sxy": (0, 1), "szz": (2, 2)},
                "plane_strain": {"sxx": (0, 0), "syy": (1, 1), "sxy": (0, 1), "szz": (2, 2)},
                "axisymmetric": {"srr": (0, 0), "szz": (1, 1), "srz": (0, 1), "shoop": (2, 2)}}


@dataclass(frozen=True)
class Material:
    """Isotropic linear-elastic material: Young's modulus ``E`` > 0 and
    Poisson's ratio ``-1 < nu < 0.5``."""

    E: float
    nu: float
    name: str = ""

    def __post_init__(self):
        if not (np.isfinite(self.E) and self.E > 0):
            raise InputError(f"Material {self.name!r}: E must be a positive number, got {self.E}")
        if not (np.isfinite(self.nu) and -1.0 < self.nu < 0.5):
            raise InputError(f"Material {self.name!r}: nu must lie in (-1, 0.5), got {self.nu}")

    @property
    def lame(self) -> tuple[float, float]:
        """Lamé constants ``λ = E ν / ((1 + ν)(1 - 2ν))``, ``μ = E / (2 (1 + ν))``."""
        E, nu = float(self.E), float(self.nu)
        return E * nu / ((1 + nu) * (1 - 2 * nu)), E / (2 * (1 + nu))

    def matrix(self, analysis: str) -> np.ndarray:
        """Elasticity matrix ``D`` for the strain vector of ``analysis``
        (3x3 for plane problems, 4x4 axisymmetric); plane stress uses
        ``λ* = 2 λ μ / (λ + 2 μ)`` in place of ``λ`` (Timoshenko & Goodier §16)."""
        lam, mu = self.lame
        if analysis == "plane_stress":
            lam = 2 * lam * mu / (lam + 2 * mu)
        if analysis in ("plane_stress", "plane_strain"):
            return np.array([[lam + 2 * mu, lam, 0.0], [lam, lam + 2 * mu, 0.0], [0.0, 0.0, mu]])
        if analysis == "axisymmetric":
            a = lam + 2 * mu
            return np.array([[a, lam, 0.0, lam], [lam, a, 0.0, lam], [0.0, 0.0, mu, 0.0], [lam, lam, 0.0, a]])
        raise InputError(f"analysis must be one of {ANALYSES}, got {analysis!r}")


def materials_by_region(mesh, materials) -> dict:
    """``{region id: Material}`` for every region of ``mesh``, from one
    Material (all regions) or a dict that must name each region exactly."""
    regions = [int(r) for r in mesh.regions]
    if isinstance(materials, Material):
        return {r: materials for r in regions}
    if not isinstance(materials, dict) or not materials:
        raise InputError("materials must be a Material or a dict {region id: Material}")
    out = {}
    for k, v in materials.items():
        if not isinstance(v, Material):
            raise InputError(f"materials[{k!r}] is not a Material")
        out[int(k)] = v
    missing = [r for r in regions if r not in out]
    if missing:
        raise InputError(f"no material for region(s) {missing}; the mesh has regions {regions}")
    extra = [r for r in out if r not in regions]
    if extra:
        raise InputError(f"materials given for region(s) {extra}, which the mesh does not have (regions {regions})")
    return out
