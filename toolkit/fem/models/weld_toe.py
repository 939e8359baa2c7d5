"""Weld toe of a transverse non-load-carrying fillet-welded attachment
(plane strain).

The main plate (thickness t, mid-plane y = 0, x along the plate) carries a
transverse attachment (thickness T, height H) welded with fillet welds of leg
``weld_leg`` along the plate and ``weld_leg * tan(flank_angle)`` up the
attachment; ``sides=1`` is the one-sided T joint, ``sides=2`` the cruciform
with attachments on both faces.  The symmetric half ``x >= 0`` about the
attachment centre line is meshed; weld, attachment and plate form one body
(no root gap: the welds carry no load).  The weld toe sits at
``x_toe = T/2 + weld_leg`` on the plate surface ``y = t/2``.

With ``toe_radius`` the toe is rounded by a circle tangent to the plate
surface and the weld face (the effective-notch idea, reference radius 1 mm
in the IIW recommendations, Hobbacher 2016 §2.2.3 / Fricke 2012); without it
the toe is a sharp re-entrant corner (stresses there are singular; use the
surface stress ahead of the toe, as the hot-spot method does).

Loads on the plate end ``x = L/2``: membrane ``σ_m`` and bending ``σ_b``
(surface value), ``σ_xx = σ_m + σ_b y / (t/2)``.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from toolkit.errors import InputError
from toolkit.fem.loads import Traction
from toolkit.fem.material import Material
from toolkit.fem.supports import Displacement, Roller
from toolkit.fem.models.common import (Block, Model, QUAD_TYPES, arc, assemble, cell_edges_on, graded, join, line,
                                       scaled_element_size)

__all__ = ["weld_toe", "weld_toe_sizes"]

STEEL = Material(210_000.0, 0.3, "steel (MPa)")


def weld_toe(plate_thickness=10.0, attachment_thickness=10.0, weld_leg=8.0, sides=1, flank_angle=45.0,
             toe_radius=None, element_size=None, plate_length=None, attachment_height=None, etype="quad8",
             membrane_stress=1.0, bending_stress=0.0, growth=1.25, material=STEEL) -> Model:
    """Mesh the half model of a fillet-welded transverse attachment.

    Parameters
    ----------
    plate_thickness : t of the main plate
    attachment_thickness : T of the attachment
    weld_leg : leg length along the main plate (the leg on the attachment
        is ``weld_leg * tan(flank_angle)``)
    sides : 1 (T joint, attachment on the upper face) or 2 (cruciform)
    flank_angle : angle between the weld face and the plate surface, degrees,
        in [10, 80]
    toe_radius : None (sharp toe) or the radius of the toe rounding
    element_size : element size at the toe (default t/10 for a sharp toe,
        toe_radius/4 for a rounded one)
    plate_length : total plate length (default ``2 (T/2 + weld_leg + 4 t)``);
        the half model spans ``0 <= x <= plate_length/2``, which must leave at
        least one plate thickness between the toe and the loaded end
    attachment_height : height of the attachment above the plate surface
        (default ``max(t, 2 * vertical leg)``); must exceed the vertical leg
    membrane_stress, bending_stress : σ_m and σ_b on the plate end

    Returns
    -------
    Model with edges ``symmetry`` (x = 0), ``end`` (loaded), ``plate_surface``
    (upper surface from the toe, including the rounding, to the end),
    ``weld_face``, ``attachment_face``, ``attachment_top``, ``plate_bottom``
    (sides=1) or the ``*_bottom`` mirrors (sides=2), and the internal
    ``toe_section`` (the cut through the plate at the toe, seen from the
    loaded side); points ``toe`` (sharp toe, or where the rounding meets the
    plate surface), ``centre`` (x = 0, y = 0).
    """
    d = _dimensions(plate_thickness, attachment_thickness, weld_leg, sides, flank_angle, toe_radius, element_size,
                    plate_length, attachment_height, etype, growth)
    lay = _layout(d, sides, growth)
    mesh, edges, sets = assemble(lay.blocks, etype, mirror=lay.mirror, internal=("toe_section",))
    edges["toe_section"] = cell_edges_on(mesh, sets["toe_section"], lambda c: c[:, 0] > lay.xw)
    points = _points(mesh, d, lay)
    sm, sb = float(membrane_stress), float(bending_stress)
    loads = [Traction("end", (sm, 0.0), gradient=(sb / lay.ys, 0.0) if sb != 0.0 else None, along="y")]
    supports = [Roller("symmetry"), Displacement("centre", uy=0.0)]
    geometry = {"plate_thickness": d.t, "attachment_thickness": d.T, "weld_leg": d.leg, "vertical_leg": d.v,
                "flank_angle": d.flank_deg, "toe_radius": d.rho, "sides": sides, "plate_length": 2 * d.Lh,
                "attachment_height": d.H, "element_size": d.h, "toe_x": d.x_toe, "section_x": lay.xw,
                "surface_y": lay.ys, "etype": etype}
    return Model(kind=f"weld_toe ({'T joint' if sides == 1 else 'cruciform'})", mesh=mesh, edges=edges,
                 points=points, analysis="plane_strain", thickness=1.0, loads=loads, supports=supports,
                 material=material, geometry=geometry, nominal={"membrane": sm, "bending": sb},
                 notes="half model about the attachment centre line; plane strain per unit width")


@dataclass(frozen=True)
class _Dimensions:
    """Checked dimensions of the joint."""

    t: float                # plate thickness
    T: float                # attachment thickness
    leg: float              # weld leg along the plate
    flank_deg: float        # flank angle, degrees
    th: float               # flank angle, radians
    v: float                # vertical leg, leg * tan(th)
    x_toe: float            # toe position, T/2 + leg
    Lh: float               # half plate length (the model's extent in x)
    H: float                # attachment height above the plate surface
    rho: float | None       # toe radius (None: sharp toe)
    e: float                # tangent length of the rounding from the toe (0 for a sharp toe)
    h: float                # element size at the toe


def _dimensions(plate_thickness, attachment_thickness, weld_leg, sides, flank_angle, toe_radius, element_size,
                plate_length, attachment_height, etype, growth) -> _Dimensions:
    """Check the parameters of :func:`weld_toe` and derive the dimensions."""
    t, T, leg = float(plate_thickness), float(attachment_thickness), float(weld_leg)
    for name, v in (("plate_thickness", t), ("attachment_thickness", T), ("weld_leg", leg)):
        if not (np.isfinite(v) and v > 0):
            raise InputError(f"weld_toe: {name} must be positive, got {v}")
    if sides not in (1, 2):
        raise InputError(f"weld_toe: sides must be 1 (T joint) or 2 (cruciform), got {sides!r}")
    th_deg = float(flank_angle)
    if not (10.0 <= th_deg <= 80.0):
        raise InputError(f"weld_toe: flank_angle must lie in [10, 80] degrees, got {th_deg:g}")
    if etype not in QUAD_TYPES:
        raise InputError(f"weld_toe: etype must be one of {QUAD_TYPES}, got {etype!r}")
    th = np.radians(th_deg)
    a = T / 2
    v = leg * np.tan(th)
    x_toe = a + leg
    Lh = (a + leg + 4 * t) if plate_length is None else float(plate_length) / 2
    if not (np.isfinite(Lh) and Lh >= x_toe + t):
        raise InputError(f"weld_toe: the weld leg leaves too little plate: plate_length must be at least "
                         f"2 (attachment_thickness/2 + weld_leg + plate_thickness) = {2 * (x_toe + t):g} "
                         f"(got {2 * Lh:g})")
    H = max(t, 2 * v) if attachment_height is None else float(attachment_height)
    if not (np.isfinite(H) and H > v * (1 + 1e-9)):
        raise InputError(f"weld_toe: attachment_height must exceed the weld's vertical leg "
                         f"weld_leg*tan(flank_angle) = {v:g} (got {H:g})")
    rho = None if toe_radius is None else float(toe_radius)
    face = leg / np.cos(th)                              # weld face length
    if rho is not None:
        if not (np.isfinite(rho) and rho > 0):
            raise InputError(f"weld_toe: toe_radius must be positive (or None for a sharp toe), got {rho}")
        e = rho / np.tan((np.pi - th) / 2)               # tangent length from the toe
        lim = min(0.5 * face, 0.5 * (Lh - x_toe))
        if e > lim:
            raise InputError(f"weld_toe: toe_radius too large: the rounding must end within half the weld face "
                             f"and half the plate ahead of the toe, i.e. toe_radius <= "
                             f"{lim * np.tan((np.pi - th) / 2):g} (got {rho:g})")
    else:
        e = 0.0
    h = (t / 10 if rho is None else rho / 4) if element_size is None else float(element_size)
    hmax = min(t / 2, leg / 2) if rho is None else rho
    if not (0 < h <= hmax):
        raise InputError(f"weld_toe: element_size must lie in (0, {hmax:g}] "
                         f"({'min(plate_thickness, weld_leg)/2' if rho is None else 'toe_radius'}), got {h:g}")
    if not (1.0 < growth <= 2.0):
        raise InputError(f"weld_toe: growth must lie in (1, 2], got {growth}")
    return _Dimensions(t, T, leg, th_deg, th, v, x_toe, Lh, H, rho, e, h)


@dataclass(frozen=True, eq=False)
class _Layout:
    """The blocks of the half model and the places the naming step needs."""

    blocks: list
    mirror: tuple | None
    ys: float               # plate upper surface, t/2
    xw: float               # x of the cut through the plate under the weld-side end of the rounding
    Qw: np.ndarray          # where the rounding meets the weld face (the toe when sharp)
    Qp: np.ndarray          # where the rounding meets the plate surface (the toe when sharp)


def _plate_surface(d: _Dimensions, Qp, Qw, xw, ys, growth):
    """The element distribution along the plate ahead of the weld and the
    curve of its upper surface (the toe rounding, when there is one, then the
    straight surface to the end)."""
    far = max(d.h, d.t / 2)
    if d.rho is None:
        s_p2 = graded(d.Lh - xw, d.h, far, growth)
        top = line(Qw, (d.Lh, ys))
    else:
        La = d.rho * d.th
        n_arc = max(2, int(np.ceil(La / d.h)))
        rest = graded(d.Lh - Qp[0], La / n_arc, far, growth)
        Ltot = La + (d.Lh - Qp[0])
        s_p2 = np.concatenate([np.linspace(0.0, La, n_arc + 1), La + rest[1:] * (d.Lh - Qp[0])]) / Ltot
        centre = np.array([Qp[0], ys + d.rho])
        top = join(arc(centre, d.rho, -np.pi / 2 - d.th, -np.pi / 2), line(Qp, (d.Lh, ys)))
    return s_p2, top


def _layout(d: _Dimensions, sides, growth) -> _Layout:
    """Mapped blocks: plate under the weld, plate ahead of it, weld,
    attachment; the plate's lower half as blocks (T joint) or the mirror
    image of the whole about y = 0 (cruciform)."""
    t, Lh, v, H, h = d.t, d.Lh, d.v, d.H, d.h
    a = d.T / 2
    ys = t / 2
    toe = np.array([d.x_toe, ys])
    uw = np.array([-np.cos(d.th), np.sin(d.th)])
    Qw = toe + d.e * uw
    Qp = toe + np.array([d.e, 0.0])
    xw = Qw[0]
    cap = max(h, t / 8)
    # distributions
    s_p1 = graded(xw, h, max(h, t / 4), growth, at="end")          # under the weld, fine at the toe
    t_pu = graded(ys, h, cap, growth, at="end")                     # plate upper half, fine at the surface
    s_p2, top = _plate_surface(d, Qp, Qw, xw, ys, growth)
    t_w = graded(v - (Qw[1] - ys), h, max(h, v / 4), growth)
    first_a = (t_w[-1] - t_w[-2]) * v
    t_a = graded(H - v, first_a, max(first_a, H / 4), growth)
    yv, yH = ys + v, ys + H
    blocks = [
        Block(line((0, 0), (xw, 0)), line((xw, 0), Qw), line((0, ys), Qw), line((0, 0), (0, ys)), s_p1, t_pu,
              names={"left": "symmetry"}),
        Block(line((xw, 0), (Lh, 0)), line((Lh, 0), (Lh, ys)), top, line((xw, 0), Qw), s_p2, t_pu,
              names={"right": "end", "top": "plate_surface", "left": "toe_section"}),
        Block(line((0, ys), Qw), line(Qw, (a, yv)), line((0, yv), (a, yv)), line((0, ys), (0, yv)), s_p1, t_w,
              names={"left": "symmetry", "right": "weld_face"}),
        Block(line((0, yv), (a, yv)), line((a, yv), (a, yH)), line((0, yH), (a, yH)), line((0, yv), (0, yH)),
              s_p1, t_a, names={"left": "symmetry", "right": "attachment_face", "top": "attachment_top"}),
    ]
    mirror = None
    if sides == 1:
        t_pl = 1.0 - t_pu[::-1]                                      # fine at the bottom surface
        blocks += [
            Block(line((0, -ys), (xw, -ys)), line((xw, -ys), (xw, 0)), line((0, 0), (xw, 0)), line((0, -ys), (0, 0)),
                  s_p1, t_pl, names={"left": "symmetry", "bottom": "plate_bottom"}),
            Block(line((xw, -ys), (Lh, -ys)), line((Lh, -ys), (Lh, 0)), line((xw, 0), (Lh, 0)),
                  line((xw, -ys), (xw, 0)), s_p2, t_pl,
                  names={"bottom": "plate_bottom", "right": "end", "left": "toe_section"}),
        ]
    else:
        mirror = ("y", 0.0, {n: n + "_bottom" for n in ("plate_surface", "weld_face", "attachment_face",
                                                          "attachment_top")})
    return _Layout(blocks, mirror, ys, xw, Qw, Qp)


def _points(mesh, d: _Dimensions, lay: _Layout) -> dict:
    """Named points: the toe, the centre (0, 0) and, for a rounded toe, where
    the rounding starts on the weld face."""
    def node_at(p):
        return int(np.argmin(np.linalg.norm(mesh.nodes - np.asarray(p, float), axis=1)))

    points = {"toe": node_at(lay.Qp), "centre": node_at((0.0, 0.0))}
    if d.rho is not None:
        points["rounding_start"] = node_at(lay.Qw)
    return points


def weld_toe_sizes(plate_thickness, weld_leg, element_size=0.0) -> tuple[float, float]:
    """Element size at a sharp toe for :func:`weld_toe`, scaled to the joint,
    and the coarsest size a mesh convergence study may use.

    With the feature length ``l = min(t, 2 leg)`` (the plate thickness, or
    twice the weld leg when the weld is small): ``h = element_size`` when it
    is positive, else the scaled default ``h = l / 48`` (0.25 mm for t = 12,
    leg 8); the study's coarsest size is ``l / 12``, which never exceeds the
    mesher's limit ``min(t, leg) / 2``.  The IIW type "a" read-out points at
    0.4 t and 1.0 t then lie about 19 and 48 elements from the toe (IIW
    recommendations, 2016: fine meshes of at most 0.4 t at the toe; the
    finer default is common practice for a convergence study).

    Returns ``(h, coarsest)`` in mm.
    """
    t, leg = float(plate_thickness), float(weld_leg)
    for name, v in (("plate_thickness", t), ("weld_leg", leg)):
        if not (np.isfinite(v) and v > 0):
            raise InputError(f"weld_toe_sizes: {name} must be positive, got {v!r}")
    ell = min(t, 2 * leg)
    h = scaled_element_size("weld_toe_sizes", element_size, ell / 48)
    return h, ell / 12
