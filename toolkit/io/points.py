"""Integration points given by coordinates, matched to each element type's
point sets by position: the stored Gauss rules a point set may be, the
nearest-point assignment cell by cell, and the match itself (a fast path
against a candidate rule, else the inverse isoparametric map of every point
against the first cell's set).  Values are then reordered by that match,
never by row order."""
from __future__ import annotations

import numpy as np

from toolkit.errors import InputError
from toolkit.core.arrays import chunk_slices
from toolkit.core.mesh import inverse_map
from toolkit.io.about import MAX_RULE_POINTS

__all__ = ["POINT_TOL", "candidate_rule", "rule_spec", "match_points"]

#: Tolerance in natural coordinates for matching imported integration points
#: to a reference point set and for deciding that a point lies inside its element.
POINT_TOL = 1e-2


def rule_spec(et, rule):
    """``"full"``/``"reduced"`` when ``rule`` is that rule of ``et``, else the rule."""
    for which in ("full", "reduced"):
        r = et.rule(which)
        if r.npoints == rule.npoints and np.allclose(r.points, rule.points, rtol=0, atol=1e-13):
            return which
    return rule


def candidate_rule(et, q):
    """The stored Gauss rule of ``et``'s shape with ``q`` points, or None
    (also for more than :data:`~toolkit.io.about.MAX_RULE_POINTS` points, before any rule is built)."""
    if not 0 < int(q) <= MAX_RULE_POINTS:
        return None
    try:
        return et.rule(int(q))
    except ValueError:
        return None


def _assign(match_fn, C, q, tol):
    """Nearest reference point for every given point, cell by cell.

    ``match_fn(s, e) -> (nearest (c, q), distance (c, q))`` gives, for the
    given points of cells ``s:e``, the index of the nearest reference point
    and the distance to it in natural coordinates.  Returns ``assign (C, q)``,
    ``nomatch (C, q)`` (nearest farther than ``tol``) and ``notperm (C,)``
    (two points matched the same one).
    """
    assign = np.empty((C, q), dtype=np.intp)
    nomatch = np.zeros((C, q), dtype=bool)
    for sl in chunk_slices(C, q * q, budget=2_000_000):
        s, e = sl.start, sl.stop
        a, dist = match_fn(s, e)
        assign[s:e] = a
        nomatch[s:e] = dist > tol
    notperm = ~(np.sort(assign, axis=1) == np.arange(q)).all(axis=1)
    return assign, nomatch, notperm


def match_points(gt, mesh, b, X, rows, tol):
    """Natural point set of block ``b`` and, per cell, which reference point
    each given point is.  ``gt`` is the table of ``gauss.csv`` (for messages);
    ``X`` (C, q, dim) physical coordinates sorted by (cell, point number);
    ``rows`` (C, q) their data rows."""
    rule = candidate_rule(b.element, X.shape[1])
    if rule is not None:
        assign = _match_rule(mesh, b, rule, X, tol)
        if assign is not None:
            return rule_spec(b.element, rule), assign
    return _match_natural(gt, mesh, b, rule, X, rows, tol)


def _match_rule(mesh, b, rule, X, tol):
    """Fast path: the assignment of the given points to the points of
    ``rule`` in every cell, or None when some point is none of them (or a
    cell is collapsed).

    One Newton step from each rule point, d_xi = J^-1 (x - x_p), tells how
    far (in natural coordinates) a given point is from the rule point p that
    is nearest in space.
    """
    C, q, dim = X.shape
    g = mesh.geometry(b.name, rule)
    try:
        with np.errstate(all="ignore"):
            Jinv = np.linalg.inv(g.J_cqij)
    except np.linalg.LinAlgError:      # a collapsed cell: leave it to the general path
        return None

    def fast(s, e):
        XR = g.x_cqi[s:e]
        D2 = ((X[s:e, :, None, :] - XR[:, None, :, :]) ** 2).sum(-1)
        a = D2.argmin(-1)
        ci = np.arange(e - s)[:, None]
        dxi = np.einsum("cqij,cqj->cqi", Jinv[s:e][ci, a], X[s:e] - XR[ci, a])
        return a, np.sqrt((dxi ** 2).sum(-1))

    assign, nomatch, notperm = _assign(fast, C, q, tol)
    if not nomatch.any() and not notperm.any():
        return assign
    return None


def _match_natural(gt, mesh, b, rule, X, rows, tol):
    """General path: inverse map every point, then match to the first cell's
    set; the set is ``rule`` (or its name) when the averaged set is that rule,
    else the averaged natural points."""
    et = b.element
    C, q, dim = X.shape
    xe = mesh.nodes[b.cells]
    xflat = X.reshape(-1, dim)
    try:
        xi, conv = inverse_map(et, np.repeat(xe, q, axis=0), xflat)
    except ValueError as e:
        raise InputError(f"{gt.path}: could not map the {b.name} points to natural coordinates ({e})") from None
    inside = conv & et.contains(xi, tol=tol)
    if not inside.all():
        bad = np.flatnonzero(~inside)
        i = int(bad[np.argmin(rows.ravel()[bad])])
        r = int(rows.ravel()[i])
        c = i // q
        how = (f"natural coordinates ({', '.join(f'{v:.4g}' for v in xi[i])})" if conv[i]
               else "the inverse map found no natural coordinates")
        raise InputError(f"{gt.where(r)}: point {int(gt.col('point')[r])} of element {int(b.ids[c])} at "
                         f"({', '.join(f'{v:.6g}' for v in xflat[i])}) lies outside the element ({how})")
    XI = xi.reshape(C, q, dim)
    ref = XI[0]                       # the first cell's points, by point number

    def natural(s, e):
        D2 = ((XI[s:e, :, None, :] - ref[None, None, :, :]) ** 2).sum(-1)
        a = D2.argmin(-1)
        return a, np.sqrt(np.take_along_axis(D2, a[..., None], -1)[..., 0])

    assign, nomatch, notperm = _assign(natural, C, q, 2 * tol)
    if nomatch.any() or notperm.any():
        bad_rows = np.where(nomatch, rows, np.iinfo(np.int64).max).min(axis=1)
        bad_rows = np.where(notperm, np.minimum(bad_rows, rows.min(axis=1)), bad_rows)
        c = int(np.argmin(bad_rows))
        if nomatch[c].any():
            j = int(np.flatnonzero(nomatch[c])[0])
            r = int(rows[c, j])
            raise InputError(f"{gt.where(r)}: point {int(gt.col('point')[r])} of element {int(b.ids[c])} sits at "
                             f"natural coordinates ({', '.join(f'{v:.4g}' for v in XI[c, j])}), which is none of the "
                             f"points element {int(b.ids[0])} (the first {et.name}) carries; every element of a type "
                             "must carry the same set of points")
        r = int(rows[c, 0])
        raise InputError(f"{gt.where(r)}: the points of element {int(b.ids[c])} do not match those of element "
                         f"{int(b.ids[0])} (the first {et.name}) one to one (two points at the same place?); every "
                         "element of a type must carry the same set of points")
    # reference set averaged over all cells (reduces rounding noise of imported coordinates)
    XS = np.empty_like(XI)
    np.put_along_axis(XS, assign[:, :, None], XI, axis=1)
    ref = XS.mean(axis=0)
    if rule is not None:
        D2 = ((ref[:, None, :] - rule.points[None, :, :]) ** 2).sum(-1)
        m = D2.argmin(1)
        if np.sqrt(D2.min(1)).max() <= tol and len(set(m.tolist())) == q:
            return rule_spec(et, rule), m[assign]
    return ref, assign
