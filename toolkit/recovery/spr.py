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
  (rows from :class:`~toolkit.core.numbering.DofMap`, as in ``project_l2``).

Vectorised: patches are grouped by their number of sampling points and
polynomial degree and each group is solved as one stack of small
least-squares problems (batched QR); there is no loop over nodes.
"""
from __future__ import annotations

import time

import numpy as np

from toolkit.errors import InputError
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
        raise InputError(f"no SPR patch polynomial of degree {degree} in {dim}D (use 1 or 2)")
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
        raise InputError("recover_spr needs a GaussField")
    if not (0 < rcond < 1):
        raise InputError(f"rcond must lie in (0, 1), got {rcond}")
    t0 = time.perf_counter()
    mesh = field.mesh
    dofs = DofMap(mesh, across_regions)
    samples = _Samples(field, dofs)
    pv, pe = samples.vertex_pairs()                     # the patches: (vertex unknown, element) pairs
    boundary = _boundary_dofs(mesh, dofs)
    nodal = _NodalSums(dofs.ndof, field.ncomponents)
    stats = {}

    # interior patches first, then boundary patches for the nodes no interior patch reached
    interior_pairs = ~boundary[pv]
    stats["interior_patches"], stats["interior_rank_deficient"] = _fit_patches(
        samples, pv[interior_pairs], pe[interior_pairs], rcond, nodal)
    missing = nodal.count == 0
    stats["boundary_patches"] = stats["boundary_rank_deficient"] = 0
    stats["nodes_from_boundary_patches"] = int(missing.sum())
    if missing.any():
        stats["boundary_patches"], stats["boundary_rank_deficient"] = _fit_patches(
            samples, pv[~interior_pairs], pe[~interior_pairs], rcond, nodal, targets_only=missing)
    left = nodal.count == 0
    if left.any():
        i = int(np.flatnonzero(left)[0])
        reg = int(dofs.region[i])
        raise InputError(f"recover_spr: node {int(mesh.node_ids[dofs.node[i]])}"
                         f"{'' if reg < 0 else f' (region {reg})'} lies in no patch with enough sampling points "
                         f"for a determined fit ({int(left.sum())} such nodes); refine the mesh or use project_l2")
    x = nodal.total / nodal.count[:, None]
    info = {"method": "spr", "across_regions": dofs.across_regions, "ndof": dofs.ndof, **stats,
            "time": time.perf_counter() - t0}
    return NodalField(mesh, x, field.components, dofs.node, dofs.region, method="spr", info=info)


class _Samples:
    """The sampling points of every element, concatenated over the blocks:
    their positions ``X`` (points, dim) and values ``V`` (points,
    components), each element's first point ``start``, point count ``npts``
    and patch degree ``degree``; per block the elements' unknowns ``cdofs``
    and corner count ``corner``; ``elem_off`` the blocks' first element."""

    def __init__(self, field, dofs):
        mesh = field.mesh
        self.mesh, self.dofs = mesh, dofs
        self.dim, self.ncomp = dim, ncomp = mesh.dim, field.ncomponents
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
        self.X, self.V = np.concatenate(X), np.concatenate(V)
        self.start, self.npts, self.degree = np.concatenate(start), np.concatenate(npts), np.concatenate(degree)
        self.cdofs, self.corner = cdofs, corner
        self.elem_off = np.cumsum([0] + [len(c) for c in cdofs])

    def vertex_pairs(self):
        """(vertex unknown, element) pairs: every element once in the patch
        of each of its corner nodes."""
        pv, pe = [], []
        for i, (cd, nc) in enumerate(zip(self.cdofs, self.corner)):
            pv.append(cd[:, :nc].ravel())
            pe.append(np.repeat(self.elem_off[i] + np.arange(len(cd)), nc))
        return np.concatenate(pv), np.concatenate(pe)

    def element_dofs(self, e):
        """All unknowns of elements ``e`` (pairs: position in e, unknown)."""
        elem_off = self.elem_off
        blk = np.searchsorted(elem_off, e, side="right") - 1
        rows, cols = [], []
        for i, cd in enumerate(self.cdofs):
            sel = np.flatnonzero(blk == i)
            if sel.size:
                k = cd.shape[1]
                rows.append(np.repeat(sel, k))
                cols.append(cd[e[sel] - elem_off[i]].ravel())
        return np.concatenate(rows), np.concatenate(cols)


class _NodalSums:
    """Sums of the fitted values per unknown (``total``) and their count."""

    def __init__(self, ndof, ncomp):
        self.total = np.zeros((ndof, ncomp))
        self.count = np.zeros(ndof)


class _Patches:
    """Patches of the vertex unknowns ``v`` from their (vertex, element)
    pairs: the patches' vertex unknowns ``patches`` (P,); their sampling
    points, ``point`` entries grouped by patch, ``entry_start`` and ``S``
    the first and count per patch; ``pdeg`` the polynomial degree (the
    highest of the elements'); the targets, (patch, unknown) pairs
    ``tpatch``, ``tdof`` for every node of every element of the patch
    (only at ``targets_only`` if given)."""

    def __init__(self, samples, v, e, targets_only=None):
        ndof = samples.dofs.ndof
        order = np.lexsort((e, v))
        v, e = v[order], e[order]
        self.patches, first, inv = np.unique(v, return_index=True, return_inverse=True)
        self.P = P = len(self.patches)
        # sampling-point entries of every pair, grouped by patch
        cnt = samples.npts[e]
        pair_of = np.repeat(np.arange(len(v)), cnt)
        within = np.arange(cnt.sum()) - np.repeat(np.cumsum(cnt) - cnt, cnt)
        self.point = samples.start[e][pair_of] + within
        patch_of_entry = inv[pair_of]
        self.S = S = np.bincount(patch_of_entry, minlength=P)
        self.entry_start = np.cumsum(S) - S
        self.pdeg = np.maximum.reduceat(samples.degree[e], first)
        # targets: (patch, unknown) for every node of every element of the patch
        pos, tdof = samples.element_dofs(e)
        tpatch = inv[pos]
        tkey = np.sort(tpatch * ndof + tdof)
        tkey = tkey[np.r_[True, tkey[1:] != tkey[:-1]]]
        tpatch, tdof = tkey // ndof, tkey % ndof
        if targets_only is not None:
            keep = targets_only[tdof]
            tpatch, tdof = tpatch[keep], tdof[keep]
        self.tpatch, self.tdof = tpatch, tdof

    def groups(self):
        """Patches alike in sampling-point count ``s`` and degree: ``(indices,
        s, degree)`` per group."""
        gkey = self.S * 4 + self.pdeg
        for gk in np.unique(gkey):
            yield np.flatnonzero(gkey == gk), int(gk // 4), int(gk % 4)


def _fit_patches(samples, v, e, rcond, nodal, targets_only=None):
    """Fit the patches of the vertex unknowns in pairs ``(v, e)`` and add
    their values at their nodes to ``nodal`` (only at ``targets_only`` if
    given).  Returns the counts of used and rank-deficient fits."""
    if not v.size:
        return 0, 0
    patches = _Patches(samples, v, e, targets_only)
    used = bad = 0
    for grp, s, deg in patches.groups():
        exps = patch_exponents(samples.dim, deg)
        xc, h, coef, ok = _local_fits(samples, patches, grp, s, exps, rcond)
        used += int(ok.sum())
        bad += int((~ok).sum())
        _add_at_targets(samples, patches, grp, exps, xc, h, coef, ok, nodal)
    return used, bad


def _local_fits(samples, patches, grp, s, exps, rcond):
    """Least-squares fits of the patches ``grp`` (``s`` sampling points
    each, polynomial ``exps``) in coordinates centred on the vertex node
    ``xc`` and scaled by the patch radius ``h``: ``xc, h, coef (G, t, a)``
    and ``ok``, the fits that are determined."""
    mesh, dofs, ncomp = samples.mesh, samples.dofs, samples.ncomp
    idx = patches.point[patches.entry_start[grp][:, None] + np.arange(s)]   # (G, s)
    xc = mesh.nodes[dofs.node[patches.patches[grp]]]                          # (G, dim)
    d = samples.X[idx] - xc[:, None, :]                                      # (G, s, dim)
    h = np.linalg.norm(d, axis=2).max(axis=1)                                # (G,)
    A = _monomials(d / h[:, None, None], exps)                              # (G, s, t)
    b = samples.V[idx]                                                       # (G, s, a)
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
    return xc, h, coef, ok


def _add_at_targets(samples, patches, grp, exps, xc, h, coef, ok, nodal):
    """Evaluate the determined fits of group ``grp`` at their patches'
    targets and add the values to the nodal sums."""
    mesh, dofs = samples.mesh, samples.dofs
    slot = np.full(patches.P, -1)
    slot[grp[ok]] = np.flatnonzero(ok)
    tsel = np.flatnonzero(slot[patches.tpatch] >= 0)
    if not tsel.size:
        return
    tdof = patches.tdof[tsel]
    j = slot[patches.tpatch[tsel]]
    z = (mesh.nodes[dofs.node[tdof]] - xc[j]) / h[j][:, None]
    Pt = _monomials(z, exps)                                          # (T, t)
    val = np.matmul(Pt[:, None, :], coef[j])[:, 0]                     # (T, a)
    for a in range(samples.ncomp):
        nodal.total[:, a] += np.bincount(tdof, weights=val[:, a], minlength=dofs.ndof)
    nodal.count[:] += np.bincount(tdof, minlength=dofs.ndof)
