"""Superconvergent patch recovery (Zienkiewicz & Zhu 1992, Int. J. Numer.
Meth. Eng. 33, 1331-1364 and 1365-1382).

For every vertex node the *patch* is the set of elements sharing it.  A
polynomial ``σ*(x) = P(x) a`` is fitted by least squares to the values at the
patch's sampling points,

    minimise  Σ_i (P(x_i) a - σ_h(x_i))^2,

one fit per component (all components share one factorisation), and evaluated
at every node of the patch's elements.  Nodes reached by several patches get
the mean.  ``recover_spr`` has the call shape of :func:`~toolkit.project_l2`
and returns a :class:`~toolkit.fields.NodalField` with the same rows.

Choices made here (each is the usual one):

* Sampling points: the reduced Gauss rule for quads and hexes (1 point for
  quad4/hex8, 2x2 for quad8/quad9, 2x2x2 for hex20: the superconvergent
  points of the stress); for triangles and tetrahedra the points the field is
  given at.  Values there come from each element's local field (the
  polynomial through its integration-point values, Hinton & Campbell 1974)
  when the field is given at other points.
* Patch polynomial: complete of the element's degree in physical
  coordinates, linear (1, x, y[, z]) for quad4/tri3/hex8/tet4, complete
  quadratic for quad8/quad9/tri6/hex20/tet10 (mixed patches: the higher),
  in coordinates centred on the vertex node and scaled by the patch radius
  for conditioning.
* Which patches count: first the patches of *interior* vertex nodes (not on
  the boundary of the mesh, nor, unless ``across_regions``, on a region
  boundary); their fits give values at all nodes of their elements, so
  boundary nodes take values from interior patches.  Nodes no interior patch
  reaches (coarse meshes, sharp corners of a region) then take the fit of the
  boundary vertex patches containing them, where those fits are determined.
  Fits whose least-squares matrix is rank-deficient (in its QR factors
  ``min |R_ii| < rcond max |R_ii|``) are not used.  A node left without any value raises
  ValueError.  The counts are in ``info``.
* No smoothing across region boundaries unless ``across_regions=True``
  (rows from :class:`~toolkit.recovery.DofMap`, as in ``project_l2``).

Vectorised: patches are grouped by their number of sampling points and
polynomial degree and each group is solved as one stack of small
least-squares problems (batched QR); there is no loop over nodes.
"""
from __future__ import annotations

import time

import numpy as np

from toolkit.core.elements import local_field_exponents, local_field_matrix
from toolkit.core.fields import GaussField, NodalField
from toolkit.core.numbering import DofMap

__all__ = ["recover_spr", "sampling_points", "patch_exponents"]


def sampling_points(element, field_points) -> np.ndarray:
    """Natural coordinates of the SPR sampling points of one element type:
    the reduced Gauss rule on quads and hexes, the field's own points on
    triangles and tetrahedra."""
    if element.shape in ("quad", "hex"):
        return element.rule("reduced").points
    return np.asarray(field_points, dtype=float)


def patch_exponents(dim: int, degree: int) -> np.ndarray:
    """Exponents of the complete polynomial of total ``degree`` (1 or 2) in
    ``dim`` coordinates (the P1 / P2 spaces of the simplex elements)."""
    shape = "tri" if dim == 2 else "tet"
    n = {(2, 1): 3, (2, 2): 6, (3, 1): 4, (3, 2): 10}.get((dim, degree))
    if n is None:
        raise ValueError(f"no SPR patch polynomial of degree {degree} in {dim}D (use 1 or 2)")
    return local_field_exponents(shape, n)[0]


def _monomials(z, exps) -> np.ndarray:
    """``P[..., j] = prod_d z[..., d] ** exps[j, d]`` for exponents 0..2."""
    out = None
    for d in range(z.shape[-1]):
        zd = z[..., d]
        powers = np.stack([np.ones_like(zd), zd, zd * zd], axis=-1)
        f = powers[..., exps[:, d]]
        out = f if out is None else np.multiply(out, f, out=out)
    return out


def _boundary_dofs(mesh, dofs) -> np.ndarray:
    """Unknowns on a facet (2D: edge, 3D: face) that belongs to one cell only.
    Facets are keyed by the unknowns of their corners, so with one unknown per
    (node, region) a region interface counts as boundary of each region."""
    keys = []
    for b in mesh.blocks:
        et = b.element
        cd = dofs.cell_dofs[b.name].astype(np.int64)
        facets = [e[:2] for e in et.edges] if et.dim == 2 else [tuple(f) for f in et.faces]
        for f in facets:
            k = np.sort(cd[:, list(f)], axis=1)
            keys.append(np.pad(k, ((0, 0), (0, 4 - k.shape[1])), constant_values=-1))
    keys = np.concatenate(keys)
    if mesh.dim == 2:               # edges: one integer key per edge
        k1 = keys[:, 0] * dofs.ndof + keys[:, 1]
        _, first, counts = np.unique(k1, return_index=True, return_counts=True)
        once = keys[first[counts == 1], :2].ravel()
    else:
        uniq, counts = np.unique(keys, axis=0, return_counts=True)
        once = uniq[counts == 1].ravel()
    boundary = np.zeros(dofs.ndof, dtype=bool)
    boundary[once[once >= 0]] = True
    return boundary


def recover_spr(field: GaussField, across_regions: bool = False, rcond: float = 1e-8) -> NodalField:
    """Superconvergent patch recovery of ``field`` to the nodes (Zienkiewicz &
    Zhu 1992); all components at once.  See the module notes for the
    sampling points, patch polynomial and boundary treatment.

    Parameters
    ----------
    field : GaussField
    across_regions : bool
        Patches span region boundaries (default: a node shared by two regions
        gets one value per region, as with ``project_l2``).
    rcond : float
        Patch fits with ``min |R_ii| < rcond max |R_ii|`` in the QR factors
        of their least-squares matrix are rank-deficient and not used.
    """
    if not isinstance(field, GaussField):
        raise ValueError("recover_spr needs a GaussField")
    if not (0 < rcond < 1):
        raise ValueError(f"rcond must lie in (0, 1), got {rcond}")
    t0 = time.perf_counter()
    mesh = field.mesh
    dofs = DofMap(mesh, across_regions)
    dim, ncomp = mesh.dim, field.ncomponents

    # sampling points of every element, concatenated over blocks
    X, V, start, npts, degree, cdofs, corner = [], [], [], [], [], [], []
    offset = 0
    for b in mesh.blocks:
        et = b.element
        sp = sampling_points(et, field.points[b.name])
        vals = field.values[b.name]
        fp = field.points[b.name]
        if not (len(sp) == len(fp) and np.allclose(sp, fp, atol=1e-13)):
            vals = np.matmul(local_field_matrix(et, fp, sp), vals)          # (c, s, a)
        x = mesh.geometry(b.name, sp).x_cqi                                 # (c, s, d)
        m, s = len(b), len(sp)
        X.append(x.reshape(-1, dim))
        V.append(vals.reshape(-1, ncomp))
        start.append(offset + s * np.arange(m))
        npts.append(np.full(m, s))
        degree.append(np.full(m, 1 if et.degree == 1 else 2))
        cdofs.append(dofs.cell_dofs[b.name].astype(np.int64))
        corner.append(et.ncorners)
        offset += m * s
    X, V = np.concatenate(X), np.concatenate(V)
    start, npts, degree = np.concatenate(start), np.concatenate(npts), np.concatenate(degree)
    elem_off = np.cumsum([0] + [len(c) for c in cdofs])

    # (vertex unknown, element) pairs
    pv, pe = [], []
    for i, (cd, nc) in enumerate(zip(cdofs, corner)):
        pv.append(cd[:, :nc].ravel())
        pe.append(np.repeat(elem_off[i] + np.arange(len(cd)), nc))
    pv, pe = np.concatenate(pv), np.concatenate(pe)
    boundary = _boundary_dofs(mesh, dofs)

    def elem_dofs(e):
        """All unknowns of elements ``e`` (pairs: position in e, unknown)."""
        blk = np.searchsorted(elem_off, e, side="right") - 1
        rows, cols = [], []
        for i, cd in enumerate(cdofs):
            sel = np.flatnonzero(blk == i)
            if sel.size:
                k = cd.shape[1]
                rows.append(np.repeat(sel, k))
                cols.append(cd[e[sel] - elem_off[i]].ravel())
        return np.concatenate(rows), np.concatenate(cols)

    total = np.zeros((dofs.ndof, ncomp))
    count = np.zeros(dofs.ndof)
    stats = {}

    def run(mask, targets_only=None):
        """Fit the patches of the vertex unknowns in pairs ``mask`` and add
        their values at their nodes (only at ``targets_only`` if given)."""
        v, e = pv[mask], pe[mask]
        if not v.size:
            return 0, 0
        order = np.lexsort((e, v))
        v, e = v[order], e[order]
        patches, first, inv = np.unique(v, return_index=True, return_inverse=True)
        P = len(patches)
        # sampling-point entries of every pair, grouped by patch
        cnt = npts[e]
        pair_of = np.repeat(np.arange(len(v)), cnt)
        within = np.arange(cnt.sum()) - np.repeat(np.cumsum(cnt) - cnt, cnt)
        point = start[e][pair_of] + within
        patch_of_entry = inv[pair_of]
        S = np.bincount(patch_of_entry, minlength=P)
        entry_start = np.cumsum(S) - S
        pdeg = np.maximum.reduceat(degree[e], first)
        # targets: (patch, unknown) for every node of every element of the patch
        pos, tdof = elem_dofs(e)
        tpatch = inv[pos]
        tkey = np.sort(tpatch * dofs.ndof + tdof)
        tkey = tkey[np.r_[True, tkey[1:] != tkey[:-1]]]
        tpatch, tdof = tkey // dofs.ndof, tkey % dofs.ndof
        if targets_only is not None:
            keep = targets_only[tdof]
            tpatch, tdof = tpatch[keep], tdof[keep]
        used = bad = 0
        gkey = S * 4 + pdeg
        for gk in np.unique(gkey):
            grp = np.flatnonzero(gkey == gk)
            s, deg = int(gk // 4), int(gk % 4)
            exps = patch_exponents(dim, deg)
            idx = point[entry_start[grp][:, None] + np.arange(s)]           # (G, s)
            xc = mesh.nodes[dofs.node[patches[grp]]]                          # (G, dim)
            d = X[idx] - xc[:, None, :]                                      # (G, s, dim)
            h = np.linalg.norm(d, axis=2).max(axis=1)                        # (G,)
            A = _monomials(d / h[:, None, None], exps)                      # (G, s, t)
            b = V[idx]                                                       # (G, s, a)
            if s >= len(exps):
                # least squares by QR: A = Q R, R a = Q^T b; a column that depends
                # on the ones before it gives a (near) zero diagonal entry of R
                Q, R = np.linalg.qr(A)
                dg = np.abs(np.diagonal(R, axis1=1, axis2=2))
                ok = dg.min(axis=1) > rcond * dg.max(axis=1)
                coef = np.zeros((len(grp), len(exps), ncomp))
                if ok.any():
                    coef[ok] = np.linalg.solve(R[ok], np.matmul(Q[ok].transpose(0, 2, 1), b[ok]))
            else:
                ok = np.zeros(len(grp), dtype=bool)
                coef = np.zeros((len(grp), len(exps), ncomp))
            used += int(ok.sum())
            bad += int((~ok).sum())
            # evaluate at the targets of the well-determined patches of this group
            slot = np.full(P, -1)
            slot[grp[ok]] = np.flatnonzero(ok)
            tsel = np.flatnonzero(slot[tpatch] >= 0)
            if not tsel.size:
                continue
            j = slot[tpatch[tsel]]
            z = (mesh.nodes[dofs.node[tdof[tsel]]] - xc[j]) / h[j][:, None]
            Pt = _monomials(z, exps)                                          # (T, t)
            val = np.matmul(Pt[:, None, :], coef[j])[:, 0]                     # (T, a)
            for a in range(ncomp):
                total[:, a] += np.bincount(tdof[tsel], weights=val[:, a], minlength=dofs.ndof)
            count[:] += np.bincount(tdof[tsel], minlength=dofs.ndof)
        return used, bad

    interior_pairs = ~boundary[pv]
    stats["interior_patches"], stats["interior_rank_deficient"] = run(interior_pairs)
    missing = count == 0
    stats["boundary_patches"] = stats["boundary_rank_deficient"] = 0
    stats["nodes_from_boundary_patches"] = int(missing.sum())
    if missing.any():
        stats["boundary_patches"], stats["boundary_rank_deficient"] = run(~interior_pairs, targets_only=missing)
    left = count == 0
    if left.any():
        i = int(np.flatnonzero(left)[0])
        reg = int(dofs.region[i])
        raise ValueError(f"recover_spr: node {int(mesh.node_ids[dofs.node[i]])}"
                         f"{'' if reg < 0 else f' (region {reg})'} lies in no patch with enough sampling points "
                         f"for a determined fit ({int(left.sum())} such nodes); refine the mesh or use project_l2")
    x = total / count[:, None]
    info = {"method": "spr", "across_regions": dofs.across_regions, "ndof": dofs.ndof, **stats,
            "time": time.perf_counter() - t0}
    return NodalField(mesh, x, field.components, dofs.node, dofs.region, method="spr", info=info)
