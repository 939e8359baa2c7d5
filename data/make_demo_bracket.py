"""Generate ``data/demo_bracket/``: a neutral result folder of an invented
component, a flat bracket bar with a semicircular notch in its upper edge.

Geometry (mm): bar 120 x 40, notch radius 8 centred on the upper edge at
x = 60; the last 20 mm (x > 100) are a second region (a lug of another part),
so region-wise recovery has a boundary to respect.  Mesh: 320 quad8 elements
from a mapped grid smoothed by a discrete Laplace equation (element edges
follow the notch arc).  Right of the notch the edge nodes are spaced so that
a grid line falls on x = 100 (7 elements over 68..100 mm, 5 over 100..120 mm):
the region boundary lies where the description puts it, at the workbook's
toe point, and not at the nearest uniform grid line (98.33 mm); that grid
line is held straight through the depth while the lattice is smoothed.

Two load cases, values (MPa) at the 3x3 Gauss points, written with a
``case`` column in ``gauss.csv`` and ``"cases": ["pull", "shear"]`` in
``about.json``:

* ``pull``: the Kirsch (1898) field of a circular hole of the notch radius
  centred on the notch, under a remote tension of 80 MPa along x (peak
  3 x 80 = 240 MPa at the notch root).
* ``shear``: the Kirsch field of the same hole under a remote in-plane shear
  of 30 MPa, built by superposition as the biaxial state sigma1 = +30 MPa
  along 45 degrees and sigma2 = -30 MPa along 135 degrees (closed form; peak
  |hoop stress| 4 x 30 = 120 MPa on the hole).

Neither field is an exact solution for this shape (the flat edges are not
traction-free); they only give smooth, realistic-looking raw data.  To each
element of each case is added a seeded random linear field (element-wise
jumps, like the discretisation error of a displacement solution; its own
seed per case).  Values are rounded to 0.001 MPa.  The ``pull`` values are
those the folder held when it had that one case only.

Ids are not positions: node ids run 1001, 1004, 1007, ... in a shuffled file
order, element ids start at 5001.

Run from the repository root: ``python data/make_demo_bracket.py``.  The
output is byte-identical on every run.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

from toolkit.core.cases import LoadCases
from toolkit.core.fields import GaussField
from toolkit.io import write_results
from toolkit.core.mesh import Mesh

L, H, R, XC = 120.0, 40.0, 8.0, 60.0
LUG_X = 100.0
SIGMA0 = 80.0
TAU0 = 30.0
SEED = 20240611


def _boundary(n_side, n_arc):
    """Corner-node positions along the upper edge (flat, notch arc, flat) and
    the lower edge, and the arc angle of each upper node (NaN off the arc)."""
    u_side = np.arange(n_side) / n_side
    u_arc = np.arange(n_arc) / n_arc
    th = np.pi * (1 + u_arc)
    n_lug = round(n_side * (L - LUG_X) / (L - XC - R))        # elements on the lug, a grid line at LUG_X
    n_in = n_side - n_lug
    x_right = np.r_[XC + R + np.arange(n_in) / n_in * (LUG_X - XC - R), LUG_X + np.arange(n_lug) / n_lug * (L - LUG_X)]
    top = np.r_[np.c_[u_side * (XC - R), np.full(n_side, H)],
                np.c_[XC + R * np.cos(th), H + R * np.sin(th)],
                np.c_[x_right, np.full(n_side, H)], [[L, H]]]
    bot = np.c_[np.r_[u_side * (XC - R), XC - R + 2 * R * u_arc, x_right, L],
                np.zeros(len(top))]
    angle = np.r_[np.full(n_side, np.nan), th, np.full(n_side, np.nan), np.nan]
    angle[n_side + n_arc] = 2 * np.pi            # the right end of the arc
    return top, bot, angle


def _smoothed_lattice(top, bot, tb, sweeps=4000, pin=None):
    """Corner lattice (i along the bar, j up) with fixed boundary nodes and
    interior nodes solving the discrete Laplace equation x_ss + x_tt = 0 in
    the computational plane (uniform s, graded t), so that grid lines fan out
    from the 90-degree corners where the notch meets the upper edge while
    keeping the grading towards that edge.  ``pin = (i, x)`` keeps grid
    column ``i`` on the straight line at ``x`` (the region boundary)."""
    P = (1 - tb[None, :, None]) * bot[:, None, :] + tb[None, :, None] * top[:, None, :]
    t = tb * (len(tb) - 1)
    hm, hp = np.diff(t)[:-1], np.diff(t)[1:]              # spacing below / above interior rows
    cm, cp = 2 / (hm * (hm + hp)), 2 / (hp * (hm + hp))
    for _ in range(sweeps):
        Q = P.copy()
        Q[1:-1, 1:-1] = ((P[2:, 1:-1] + P[:-2, 1:-1]) + cp[None, :, None] * P[1:-1, 2:]
                         + cm[None, :, None] * P[1:-1, :-2]) / (2 + cp + cm)[None, :, None]
        if pin is not None:
            Q[pin[0], :, 0] = pin[1]
        P = Q
    return P


def bracket_mesh(n_side=12, n_arc=16, ny=8):
    top, bot, angle = _boundary(n_side, n_arc)
    nx = 2 * n_side + n_arc
    tb = 1.0 - (1.0 - np.arange(ny + 1) / ny) ** 1.5           # finer towards the notched edge
    i_lug = int(np.flatnonzero(np.isclose(top[:, 0], LUG_X) & np.isclose(top[:, 1], H))[0])
    C = _smoothed_lattice(top, bot, tb, pin=(i_lug, LUG_X))     # (nx+1, ny+1, 2)
    cid = lambda i, j: i * (ny + 1) + j
    I, J = (a.ravel() for a in np.meshgrid(np.arange(nx), np.arange(ny), indexing="xy"))
    corners = np.stack([cid(I, J), cid(I + 1, J), cid(I + 1, J + 1), cid(I, J + 1)], 1)
    pts = [C.reshape(-1, 2)]
    # mid-side nodes: one per distinct edge; on the notch arc at the mid angle, elsewhere mid-way
    edges = np.sort(np.concatenate([corners[:, [a, b]] for a, b in ((0, 1), (1, 2), (2, 3), (3, 0))]), axis=1)
    uniq, inv = np.unique(edges, axis=0, return_inverse=True)
    mid = 0.5 * (C.reshape(-1, 2)[uniq[:, 0]] + C.reshape(-1, 2)[uniq[:, 1]])
    flat_angle = np.full((nx + 1) * (ny + 1), np.nan)
    flat_angle[cid(np.arange(nx + 1), ny)] = angle
    a0, a1 = flat_angle[uniq[:, 0]], flat_angle[uniq[:, 1]]
    on_arc = np.isfinite(a0) & np.isfinite(a1)
    am = 0.5 * (a0[on_arc] + a1[on_arc])
    mid[on_arc] = np.c_[XC + R * np.cos(am), H + R * np.sin(am)]
    pts.append(mid)
    mids = len(C.reshape(-1, 2)) + inv.reshape(4, -1).T          # (cells, 4) edges 01, 12, 23, 30
    cells = np.c_[corners, mids]
    pts = np.concatenate(pts)
    # shuffled file order and ids with gaps: ids are labels, not positions
    rng = np.random.default_rng(SEED)
    order = rng.permutation(len(pts))
    new = np.empty(len(pts), dtype=np.int64)
    new[order] = np.arange(len(order))
    nodes = pts[order]
    cells = new[cells]
    node_ids = 1001 + 3 * np.arange(len(nodes))
    centre = nodes[cells[:, :4]].mean(axis=1)
    regions = np.where(centre[:, 0] > LUG_X, 2, 1)
    cell_ids = 5001 + np.arange(len(cells))
    return Mesh(nodes, {"quad8": cells}, regions={"quad8": regions}, node_ids=node_ids,
                cell_ids={"quad8": cell_ids})


def kirsch(x, y, a=R, s0=SIGMA0, xc=XC, yc=H):
    """Kirsch (1898) stresses around a circular hole of radius ``a`` in an
    infinite plate under remote tension ``s0`` along x, in Cartesian
    components (sxx, syy, sxy)."""
    dx, dy = x - xc, y - yc
    r2 = dx ** 2 + dy ** 2
    th = np.arctan2(dy, dx)
    q2, q4 = a ** 2 / r2, a ** 4 / r2 ** 2
    c2, s2 = np.cos(2 * th), np.sin(2 * th)
    srr = 0.5 * s0 * (1 - q2) + 0.5 * s0 * (1 - 4 * q2 + 3 * q4) * c2
    stt = 0.5 * s0 * (1 + q2) - 0.5 * s0 * (1 + 3 * q4) * c2
    srt = -0.5 * s0 * (1 + 2 * q2 - 3 * q4) * s2
    c, s = np.cos(th), np.sin(th)
    sxx = srr * c * c + stt * s * s - 2 * srt * s * c
    syy = srr * s * s + stt * c * c + 2 * srt * s * c
    sxy = (srr - stt) * s * c + srt * (c * c - s * s)
    return np.stack([sxx, syy, sxy], axis=-1)


def kirsch_along(x, y, s0, angle, a=R, xc=XC, yc=H):
    """Kirsch stresses (sxx, syy, sxy) under a remote tension ``s0`` along
    the direction at ``angle`` (radians from x): :func:`kirsch` in the frame
    of the load, rotated back, ``sigma = Q sigma' Q^T``."""
    c, s = np.cos(angle), np.sin(angle)
    dx, dy = x - xc, y - yc
    p = kirsch(c * dx + s * dy, -s * dx + c * dy, a=a, s0=s0, xc=0.0, yc=0.0)
    sx, sy, sxy = p[..., 0], p[..., 1], p[..., 2]
    return np.stack([c * c * sx + s * s * sy - 2 * s * c * sxy,
                     s * s * sx + c * c * sy + 2 * s * c * sxy,
                     s * c * (sx - sy) + (c * c - s * s) * sxy], axis=-1)


def kirsch_shear(x, y, tau=TAU0):
    """Kirsch field under a remote in-plane shear ``tau`` (sxy = tau far
    away): the principal states +tau along 45 degrees and -tau along 135
    degrees superposed (Kirsch 1898; the shear case of e.g. Timoshenko &
    Goodier, *Theory of Elasticity*, 3rd ed., §35)."""
    return kirsch_along(x, y, tau, np.pi / 4) + kirsch_along(x, y, -tau, 3 * np.pi / 4)


def bracket_field(mesh, smooth_field=kirsch, seed=SEED + 1, jump=4.0, name="stress"):
    """Values at the 3x3 Gauss points: ``smooth_field(x, y)`` plus seeded
    element-wise linear jumps of about ``jump`` MPa."""
    rng = np.random.default_rng(seed)
    g = mesh.geometry("quad8", "full")
    x = g.x_cqi                                            # (c, 9, 2)
    smooth = smooth_field(x[..., 0], x[..., 1])            # (c, 9, 3)
    xi = mesh.block("quad8").element.rule("full").points   # (9, 2)
    size = np.sqrt(mesh.volumes())                          # element size
    scale = jump * (size / size.mean())[:, None]           # MPa, larger jumps in larger elements
    a = rng.normal(0, 1, (mesh.ncells, 3, 3))               # per element: constant, d/dxi, d/deta per component
    jump = (a[:, None, 0, :] + a[:, None, 1, :] * xi[None, :, 0, None] + a[:, None, 2, :] * xi[None, :, 1, None])
    values = np.round(smooth + scale[:, :, None] * jump, 3)
    return GaussField(mesh, {"quad8": values}, ("sxx", "syy", "sxy"), name=name)


def main(out=Path(__file__).resolve().parent / "demo_bracket"):
    mesh = bracket_mesh()
    cases = LoadCases({"pull": bracket_field(mesh, name="pull"),
                       "shear": bracket_field(mesh, kirsch_shear, seed=SEED + 2, jump=2.0, name="shear")},
                      name="stress")
    write_results(out, mesh, cases, coordinates=True,
                  about={"units": {"length": "mm", "stress": "MPa"},
                         "description": "Invented demo: flat bracket bar 120 x 40 mm with a semicircular notch "
                                        "(radius 8 mm) in the upper edge at x = 60 mm, region 2 = lug at x > 100 mm; "
                                        "plane stress values at the 3x3 Gauss points of 320 quad8 elements in two load "
                                        "cases, from the Kirsch field of a hole at the notch: 'pull' under 80 MPa "
                                        "remote tension along x, 'shear' under 30 MPa remote in-plane shear; each "
                                        "with seeded element-wise jumps (see data/make_demo_bracket.py)."})
    size = sum(p.stat().st_size for p in Path(out).iterdir())
    print(f"{mesh}; {cases}; wrote {out} ({size / 1000:.0f} kB)")


if __name__ == "__main__":
    main()
