"""Shoulder fillet: stepped flat bar (plane stress) or stepped round shaft
(axisymmetric).

Layout (axial coordinate a, transverse/radial coordinate b, shoulder face at
a = 0): the large part ``-large_length <= a <= 0`` has width (diameter) D,
the small part ``0 <= a <= small_length`` width d; a fillet of radius r,
tangent to the shoulder face and to the small part's surface, joins them
(centre ``(r, d/2 + r)``), so ``0 < r <= (D - d)/2``.

* flat bar: coordinates (x, y) = (a, b); tension uses the half model
  ``y >= 0`` (symmetry on the axis), bending the full depth.
* shaft: coordinates (r, z) = (b, a) for the axisymmetric solver.

Nominal stress on the small section (Peterson's convention, Pilkey & Pilkey,
*Peterson's Stress Concentration Factors*, 3rd ed., ch. 3): flat bar tension
``P / (d t)``, flat bar bending ``6 M / (t d²)``, shaft tension ``4 P / (π d²)``.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from toolkit.errors import InputError
from toolkit.fem.loads import Traction
from toolkit.fem.material import Material
from toolkit.fem.supports import Displacement, Fixed, Roller
from toolkit.fem.models.common import Block, Model, QUAD_TYPES, arc, assemble, graded, line, scaled_element_size

__all__ = ["shoulder_fillet", "shoulder_fillet_sizes"]

STEEL = Material(210_000.0, 0.3, "steel (MPa)")


def shoulder_fillet(shape="flat", large_width=2.0, small_width=1.0, fillet_radius=0.1, large_length=None,
                    small_length=None, thickness=1.0, element_size=None, etype="quad8", load="tension",
                    nominal_stress=1.0, growth=1.3, aspect=10.0, material=STEEL) -> Model:
    """Mesh a stepped bar or shaft with a shoulder fillet.

    Parameters
    ----------
    shape : ``"flat"`` (plane stress bar of ``thickness``) or ``"shaft"`` (axisymmetric)
    large_width, small_width : D > d > 0 (widths, or diameters for the shaft)
    fillet_radius : r, ``0 < r <= (D - d)/2``
    large_length, small_length : lengths of the two parts measured from the
        shoulder face (defaults 1.5 D and r + 2 d); ``small_length > r``
    element_size : element size along the fillet (default r/6); at most r
    load : ``"tension"`` (both shapes) or ``"bending"`` (flat bar only)
    nominal_stress : nominal stress on the small section (see module notes)
    growth : size ratio of neighbouring elements away from the fillet
    aspect : largest element aspect ratio allowed by the grading

    Returns
    -------
    Model with edges ``fillet``, ``shoulder`` (the face, absent when r =
    (D - d)/2), ``large_surface``, ``small_surface``, ``large_end``,
    ``small_end`` (loaded), ``axis`` (half models); points ``fillet_start``
    (on the shoulder side), ``fillet_end`` (tangent point on the small part).
    """
    dm = _dimensions(shape, large_width, small_width, fillet_radius, large_length, small_length, thickness,
                     element_size, etype, load, growth)
    D, d, r, Ll, Ls, hstep = dm.D, dm.d, dm.r, dm.Ll, dm.Ls, dm.hstep
    yc = d / 2 + r                                   # fillet centre height; top of the fillet zone
    full = shape == "flat" and load == "bending"      # bending: the full depth, mirrored about the axis
    mesh, edges, sets = assemble(_blocks(dm, growth, aspect), etype,
                                 mirror=("y", 0.0, {"axis": None}) if full else None, swap_xy=shape == "shaft")

    def node_at(a_, b_):
        p = np.array([b_, a_]) if shape == "shaft" else np.array([a_, b_])
        return int(np.argmin(np.linalg.norm(mesh.nodes - p, axis=1)))

    points = {"fillet_start": node_at(0.0, yc), "fillet_end": node_at(r, d / 2),
              "large_end_centre": node_at(-Ll, 0.0)}
    if full:
        points["large_end_top"] = node_at(-Ll, D / 2)         # held in x with the centre pinned (see _loading)
    s = float(nominal_stress)
    geometry = {"shape": shape, "large_width": D, "small_width": d, "fillet_radius": r, "large_length": Ll,
                "small_length": Ls, "element_size": dm.h, "D_over_d": D / d, "r_over_d": r / d,
                "h_over_r": hstep / r, "etype": etype, "load": load}
    loads, supports, nominal, analysis, thick, notes = _loading(shape, load, s, dm, thickness)
    return Model(kind=f"shoulder_fillet ({shape}, {load})", mesh=mesh, edges=edges, points=points, analysis=analysis,
                 thickness=thick, loads=loads, supports=supports, material=material, geometry=geometry,
                 nominal=nominal, notes=notes)


@dataclass(frozen=True)
class _Dimensions:
    """Checked dimensions of the stepped bar or shaft."""

    D: float                # large width (diameter)
    d: float                # small width (diameter)
    r: float                # fillet radius
    hstep: float            # shoulder height (D - d)/2
    Ll: float               # length of the large part
    Ls: float               # length of the small part
    h: float                # element size along the fillet


def _dimensions(shape, large_width, small_width, fillet_radius, large_length, small_length, thickness, element_size,
                etype, load, growth) -> _Dimensions:
    """Check the parameters of :func:`shoulder_fillet` and derive the dimensions."""
    if shape not in ("flat", "shaft"):
        raise InputError(f"shoulder_fillet: shape must be 'flat' or 'shaft', got {shape!r}")
    if load not in ("tension", "bending"):
        raise InputError(f"shoulder_fillet: load must be 'tension' or 'bending', got {load!r}")
    if shape == "shaft" and load == "bending":
        raise InputError("shoulder_fillet: bending of a shaft is not axisymmetric; use load='tension' or shape='flat'")
    D, d, r = float(large_width), float(small_width), float(fillet_radius)
    for name, v in (("large_width", D), ("small_width", d), ("fillet_radius", r), ("thickness", thickness)):
        if not (np.isfinite(v) and v > 0):
            raise InputError(f"shoulder_fillet: {name} must be positive, got {v}")
    if d >= D:
        raise InputError(f"shoulder_fillet: small_width must be smaller than large_width = {D:g} (got {d:g})")
    hstep = (D - d) / 2
    if r > hstep * (1 + 1e-12):
        raise InputError(f"shoulder_fillet: fillet_radius must be <= (large_width - small_width)/2 = {hstep:g} "
                         f"(got {r:g})")
    if r > hstep * (1 - 1e-9):                       # a fillet that takes the whole step, up to rounding
        r = hstep                                    # (else a sliver of zero height is left above it)
    Ll = 1.5 * D if large_length is None else float(large_length)
    Ls = r + 2 * d if small_length is None else float(small_length)
    if not (np.isfinite(Ll) and Ll > 0):
        raise InputError(f"shoulder_fillet: large_length must be positive, got {Ll}")
    if not (np.isfinite(Ls) and Ls > r):
        raise InputError(f"shoulder_fillet: small_length must exceed fillet_radius = {r:g} (got {Ls:g})")
    if etype not in QUAD_TYPES:
        raise InputError(f"shoulder_fillet: etype must be one of {QUAD_TYPES}, got {etype!r}")
    h = r / 6 if element_size is None else float(element_size)
    if not (0 < h <= r):
        raise InputError(f"shoulder_fillet: element_size must lie in (0, fillet_radius = {r:g}], got {h:g}")
    if not (1.0 < growth <= 2.0):
        raise InputError(f"shoulder_fillet: growth must lie in (1, 2], got {growth}")
    return _Dimensions(D, d, r, hstep, Ll, Ls, h)


def _blocks(dm: _Dimensions, growth, aspect) -> list:
    """Mapped blocks of the half layout (a, b >= 0): the fillet block from the
    axis up to the arc, the small part, the large part up to the fillet
    centre height and, when the fillet does not reach the large surface, the
    large part above it (its right side is the shoulder face)."""
    D, d, r, hstep, Ll, Ls, h = dm.D, dm.d, dm.r, dm.hstep, dm.Ll, dm.Ls, dm.h
    yc = d / 2 + r                                   # fillet centre height; top of the fillet zone
    n_arc = max(2, int(np.ceil(np.pi / 2 * r / h)))
    hs = r / n_arc                                   # element width at the bottom of the fillet block
    harc = np.pi / 2 * r / n_arc
    cap = aspect * hs
    s_f = np.linspace(0.0, 1.0, n_arc + 1)
    t_f = graded(yc, harc, cap, growth, at="end")     # fine at the fillet (top)
    s_w = graded(Ll, harc, max(cap, harc), growth, at="end")   # large part, fine at the shoulder
    s_n = graded(Ls - r, harc, max(cap, harc), growth)          # small part, fine at the fillet end
    top = line((-Ll, D / 2), (0, D / 2))
    blocks = [
        # fillet block: 0 <= x <= r, from the axis up to the arc
        Block(line((0, 0), (r, 0)), line((r, 0), (r, d / 2)), arc((r, yc), r, np.pi, 1.5 * np.pi),
              line((0, 0), (0, yc)), s_f, t_f, names={"bottom": "axis", "top": "fillet"}),
        # small part
        Block(line((r, 0), (Ls, 0)), line((Ls, 0), (Ls, d / 2)), line((r, d / 2), (Ls, d / 2)),
              line((r, 0), (r, d / 2)), s_n, t_f, names={"bottom": "axis", "top": "small_surface",
                                                         "right": "small_end"}),
        # large part up to the fillet centre height
        Block(line((-Ll, 0), (0, 0)), line((0, 0), (0, yc)), line((-Ll, yc), (0, yc)),
              line((-Ll, 0), (-Ll, yc)), s_w, t_f,
              names={"bottom": "axis", "left": "large_end", "top": "large_surface" if r >= hstep else None}),
    ]
    if r < hstep:
        t_u = graded(D / 2 - yc, harc, max(cap, harc), growth)
        blocks.append(Block(line((-Ll, yc), (0, yc)), line((0, yc), (0, D / 2)), top, line((-Ll, yc), (-Ll, D / 2)),
                            s_w, t_u, names={"right": "shoulder", "top": "large_surface", "left": "large_end"}))
    return blocks


def _loading(shape, load, s, dm: _Dimensions, thickness):
    """Loads, supports, nominal values, analysis, thickness and notes of the
    load case (see the module notes for the nominal stresses).  Bending
    supports act on the points ``large_end_centre`` and ``large_end_top``."""
    D, d = dm.D, dm.d
    if shape == "shaft":
        loads = [Traction("small_end", (0.0, s))]
        supports = [Roller("axis"), Roller("large_end")]
        nominal = {"nominal": s, "load": s * np.pi * d ** 2 / 4}
        analysis, thick = "axisymmetric", None
        notes = "axisymmetric (r, z); Kt = peak szz on the fillet / nominal; nominal = 4P/(pi d^2)"
    elif load == "tension":
        loads = [Traction("small_end", (s, 0.0))]
        supports = [Roller("axis"), Roller("large_end")]
        nominal = {"nominal": s, "load": s * d * thickness}
        analysis, thick = "plane_stress", float(thickness)
        notes = "half model (y >= 0); Kt = peak sxx on the fillet / nominal; nominal = P/(d t)"
    else:
        # pure bending: σ = M y / I at both ends, balanced; a pin at the large
        # end's centre and ux = 0 at its top corner stop the rigid-body modes
        M = s * thickness * d ** 2 / 6
        loads = [Traction("small_end", (0.0, 0.0), gradient=(s / (d / 2), 0.0), along="y"),
                 Traction("large_end", (0.0, 0.0), gradient=(-M / (thickness * D ** 3 / 12), 0.0), along="y")]
        supports = [Fixed("large_end_centre"), Displacement("large_end_top", ux=0.0)]
        nominal = {"nominal": s, "moment": M}
        analysis, thick = "plane_stress", float(thickness)
        notes = "full depth; Kt = peak sxx on the fillet / nominal; nominal = 6M/(t d^2)"
    return loads, supports, nominal, analysis, thick, notes


def shoulder_fillet_sizes(fillet_radius, element_size=0.0) -> tuple[float, float]:
    """Element size along the fillet for :func:`shoulder_fillet`, scaled to
    the fillet, and the coarsest size a mesh convergence study may use.

    ``h = element_size`` when it is positive, else the scaled default
    ``h = r / 16`` (about 25 elements on the quarter-circle fillet, whatever
    its radius; a size fixed in mm gives a 2 mm fillet r/8 at 0.25 mm).  The
    study's coarsest size is ``r / 4``, below the mesher's limit ``r``.
    Chosen from convergence runs of the peak fillet stress (common practice:
    tens of elements around a stress concentration): at r/16 the observed
    order of r/16, r/8, r/4 lies between 1.7 and 3.2 and the finest value is
    within 0.07 % of the Richardson value for flat bars and the shaft.

    Returns ``(h, coarsest)`` in mm.
    """
    r = float(fillet_radius)
    if not (np.isfinite(r) and r > 0):
        raise InputError(f"shoulder_fillet_sizes: fillet_radius must be positive, got {fillet_radius!r}")
    h = scaled_element_size("shoulder_fillet_sizes", element_size, r / 16)
    return h, r / 4
