"""Fields read along paths: :func:`sample` (a nodal field, one sparse
product per path) and :func:`raw_along` (each crossed cell's own
integration-point field, jumps at element boundaries kept), both giving a
:class:`PathResult` with the path-frame stresses ``snn = n.S.n``,
``stt = t.S.t``, ``snt = n.S.t`` and the invariants from
:mod:`toolkit.core.stress` (:data:`STRESS_QUANTITIES`).
"""
from __future__ import annotations

import numpy as np

from toolkit.errors import InputError
from toolkit.core import stress as _stress
from toolkit.core.elements import local_field_matrix
from toolkit.core.fields import GaussField, NodalField, RowLayout
from toolkit.core.locate import Location, PointLocator, check_outside, evaluation_operator
from toolkit.assess.paths import EdgePath, Path, PathSamples

__all__ = ["PathResult", "sample", "raw_along", "sample_regions", "STRESS_QUANTITIES"]

#: Names of the quantities :class:`PathResult` derives from a stress field.
STRESS_QUANTITIES = ("snn", "stt", "snt", "von_mises", "s1", "s2", "s3", "tresca", "hydrostatic")


# ---------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------
def _stress_kind(components):
    return _stress.stress_kind(components)


def _derived(values, components, tangents, normals, dim):
    """Path-frame stresses and invariants from :mod:`toolkit.core.stress`
    (NaN rows, from points outside the mesh, stay NaN)."""
    kind = _stress_kind(components)
    if kind is None:
        return {}
    p = len(values)
    ok = np.all(np.isfinite(values), axis=1)
    out = {k: np.full(p, np.nan) for k in STRESS_QUANTITIES}
    v = values[ok]
    if not ok.any():
        return out
    if kind != "3d" and dim == 2:
        fs = _stress.rotate_2d(v, components, tangents[ok])
        out["snn"][ok], out["stt"][ok], out["snt"][ok] = fs.normal, fs.tangential, fs.shear
    elif kind == "3d" and normals is not None:
        t, n = tangents[ok], normals[ok]
        R = np.stack([n, t, np.cross(n, t)], axis=1)     # rows: new base vectors
        r = _stress.rotate(v, components, R)
        comps = list(components)
        out["snn"][ok] = r[:, comps.index("sxx")]
        out["stt"][ok] = r[:, comps.index("syy")]
        out["snt"][ok] = r[:, comps.index("sxy")]
    else:
        for k in ("snn", "stt", "snt"):
            del out[k]
    out["von_mises"][ok] = _stress.von_mises(v, components)
    if kind == "plane":               # szz = 0 counts as the third principal stress
        vv = np.c_[v, np.zeros(len(v))]
        cc = tuple(components) + ("szz",)
    else:
        vv, cc = v, components
    s = _stress.principal(vv, cc).values
    out["s1"][ok], out["s2"][ok], out["s3"][ok] = s[:, 0], s[:, 1], s[:, 2]
    out["tresca"][ok] = _stress.tresca(v, components)
    out["hydrostatic"][ok] = _stress.hydrostatic(v, components)
    return out


def sample_regions(location) -> np.ndarray:
    """Region id of the cell holding each located point, ``-1`` outside (int (p,))."""
    mesh = location.mesh
    regs = np.concatenate([np.asarray(b.regions, dtype=np.int64) for b in mesh.blocks] + [np.array([-1])])
    offset = np.r_[0, np.cumsum([len(b) for b in mesh.blocks])]
    blk = np.asarray(location.block)
    idx = np.where(blk >= 0, offset[np.maximum(blk, 0)] + np.asarray(location.cell), len(regs) - 1)
    return regs[idx]


class PathResult:
    """A field read along a path.

    Attributes
    ----------
    distances (n,), points (n, dim), tangents (n, dim), normals (n, dim) or None
    values : dict component -> (n,) the field's own components
    derived : dict, for stress fields (components of :mod:`toolkit.core.stress`):
        ``snn``, ``stt``, ``snt`` (normal, tangential and shear stress in the
        path frame, ``n.S.n``, ``t.S.t``, ``n.S.t``), ``von_mises``, ``s1``
        >= ``s2`` >= ``s3`` (principal, the out-of-plane ``szz`` (or hoop)
        stress included, 0 for plane stress), ``tresca``, ``hydrostatic``.
    element : (n,) the mesh's element number at each point (-1 outside)
    cell_region : (n,) the region id of the cell holding each point (-1 outside);
        a change along the path marks a region boundary (pass it to
        :func:`toolkit.assess.hotspot.hot_spot_stress` as ``regions``)
    pieces : list of index arrays (raw curves: one per element crossed) or None
    method : how the field was made (``"l2"``, ``"spr"``, ``"raw"`` ...)

    ``result["stt"]`` reads any quantity.
    """

    def __init__(self, label, samples: PathSamples, values, components, location, method="", pieces=None,
                 region=None):
        self.label = label
        self.distances = samples.distances
        self.points = samples.points
        self.tangents = samples.tangents
        self.normals = samples.normals
        self.components = tuple(components)
        self.values = {c: values[:, i] for i, c in enumerate(self.components)}
        self.derived = _derived(values, self.components, self.tangents, self.normals, self.points.shape[1])
        self.element = location.cell_ids
        self.inside = location.found
        self.pieces = pieces
        self.method = method
        self.region = region
        self.cell_region = sample_regions(location)

    @property
    def quantities(self) -> tuple:
        return self.components + tuple(self.derived)

    def __getitem__(self, name):
        if name in self.values:
            return self.values[name]
        if name in self.derived:
            return self.derived[name]
        raise KeyError(f"no quantity {name!r} on this path; have {', '.join(self.quantities)}")

    def __len__(self):
        return len(self.distances)

    def peak(self, quantity, absolute=False):
        """``(distance, value)`` where ``quantity`` is largest (by magnitude
        with ``absolute=True``)."""
        v = self[quantity]
        i = int(np.nanargmax(np.abs(v) if absolute else v))
        return float(self.distances[i]), float(v[i])

    def to_array(self, quantities=None):
        """Columns ``distance, x, y[, z], then the quantities`` and their names."""
        q = list(self.quantities if quantities is None else quantities)
        d = self.points.shape[1]
        names = ["distance"] + ["x", "y", "z"][:d] + q
        cols = [self.distances] + [self.points[:, i] for i in range(d)] + [self[k] for k in q]
        return np.column_stack(cols), names

    def to_csv(self, path, quantities=None):
        """Write a CSV file: distance, coordinates, tangent, normal, element,
        then the quantities (all, by default)."""
        arr, names = self.to_array(quantities)
        d = self.points.shape[1]
        extra = [self.tangents[:, i] for i in range(d)]
        enames = ["tx", "ty", "tz"][:d]
        if self.normals is not None:
            extra += [self.normals[:, i] for i in range(d)]
            enames += ["nx", "ny", "nz"][:d]
        extra.append(self.element.astype(float))
        enames.append("element")
        arr = np.column_stack([arr[:, :1 + d]] + extra + [arr[:, 1 + d:]])
        names = names[:1 + d] + enames + names[1 + d:]
        fmt = ["%.10g"] * arr.shape[1]
        fmt[names.index("element")] = "%d"
        np.savetxt(path, arr, delimiter=",", header=",".join(names), comments="", fmt=fmt)
        return path

    def to_table(self, quantities=None, rows=11) -> str:
        """A plain-text table of about ``rows`` evenly spread samples."""
        arr, names = self.to_array(quantities)
        idx = np.unique(np.linspace(0, len(arr) - 1, min(rows, len(arr))).round().astype(int))
        w = max(10, max(len(s) for s in names) + 1)
        lines = ["".join(f"{s:>{w}}" for s in names)]
        lines += ["".join(f"{v:>{w}.4g}" for v in arr[i]) for i in idx]
        return "\n".join(lines)

    def __repr__(self):
        head = (f"PathResult({self.label}, {self.method or 'field'}: {len(self)} points over "
                f"{self.distances[-1] - self.distances[0]:.6g}")
        if not self.inside.all():
            head += f", {int((~self.inside).sum())} outside the mesh (NaN)"
        q = [k for k in ("von_mises", "stt", "s1") if k in self.derived] or list(self.components[:2])
        parts = []
        for k in q:
            dd, v = self.peak(k) if np.isfinite(self[k]).any() else (np.nan, np.nan)
            parts.append(f"max {k} {v:.4g} at {dd:.4g}")
        return head + ("; " + ", ".join(parts) if parts else "") + ")"

    def _repr_html_(self):
        arr, names = self.to_array()
        idx = np.unique(np.linspace(0, len(arr) - 1, min(11, len(arr))).round().astype(int))
        th = "".join(f"<th>{s}</th>" for s in names)
        trs = "".join("<tr>" + "".join(f"<td>{v:.4g}</td>" for v in arr[i]) + "</tr>" for i in idx)
        cap = repr(self).replace("&", "&amp;").replace("<", "&lt;")
        return f"<table><caption>{cap}</caption><tr>{th}</tr>{trs}</table>"

    def plot(self, ax=None, quantity="von_mises", label=None, **kwargs):
        """Plot ``quantity`` (a name or a list of names) against distance;
        raw curves are drawn element by element so their jumps show.
        Returns the axes (drawn by :func:`toolkit.report.plots.plot_path`)."""
        from toolkit.report.plots import plot_path

        return plot_path(self, ax, quantity, label, **kwargs)


# ---------------------------------------------------------------------------
# Sampling
# ---------------------------------------------------------------------------
def _locate_samples(mesh, path, samples, region, locator):
    if not isinstance(path, Path):
        raise InputError(f"path must be a Path (line, polyline, arc, edge_path), got {type(path).__name__}")
    if path.dim != mesh.dim:
        raise InputError(f"a {path.dim}D path on a {mesh.dim}D mesh")
    if isinstance(path, EdgePath) and path.mesh is not mesh:
        raise InputError("the edge path was built on another mesh than the field's")
    loc = path.locate(samples, region)
    if loc is None:
        if locator is None:
            locator = PointLocator.for_mesh(mesh)
        elif locator.mesh is not mesh:
            raise InputError("the locator was built for another mesh than the field's")
        loc = locator.locate(samples.points, region)
    return loc


def sample(nodal: NodalField, path: Path, n=None, distances=None, region=None, outside="raise",
           locator: PointLocator | None = None) -> PathResult:
    """Read a nodal field (all components) along a path.

    ``u(x_p) = sum_a N_a(xi_p) u_a`` in the cell holding each point, one
    sparse product (:meth:`PointLocator.operator_at`).  Samples: ``n``
    equally spaced points (default 101) or the given ``distances``.
    ``region``: read from cells of that region only (one side of a region
    boundary where the field carries one value per region).  Points outside
    the mesh raise InputError, or give NaN with ``outside="nan"``.  The
    locator is built once per mesh and reused (pass one to choose its
    tolerance).

    Examples
    --------
    A nodal field ``sxx = 100 + 10 x`` (MPa, x in mm) on two quad4 cells,
    read along their common length at five points; the elements reproduce a
    linear field exactly, so the samples are the closed form:

    >>> import numpy as np
    >>> from toolkit import Mesh, NodalField, line
    >>> mesh = Mesh([[0, 0], [2, 0], [2, 1], [0, 1], [4, 0], [4, 1]],
    ...             {"quad4": [[0, 1, 2, 3], [1, 4, 5, 2]]})
    >>> nodal = NodalField(mesh, (100 + 10 * mesh.nodes[:, :1]), ("sxx",),
    ...                    node=np.arange(6), region=np.zeros(6, int))
    >>> cut = sample(nodal, line((0.0, 0.5), (4.0, 0.5)), n=5)
    >>> cut.distances.tolist(), cut["sxx"].round(9).tolist()
    ([0.0, 1.0, 2.0, 3.0, 4.0], [100.0, 110.0, 120.0, 130.0, 140.0])
    """
    if isinstance(nodal, GaussField):
        raise InputError("sample needs a NodalField: recover one first (project_l2, recover_spr, average_nodal), "
                         "or use raw_along for the raw integration-point field")
    if not isinstance(nodal, NodalField):
        raise InputError("sample needs a NodalField")
    check_outside(outside)
    mesh = nodal.mesh
    samples = path.sample(n, distances)
    loc = _locate_samples(mesh, path, samples, region, locator)
    A = evaluation_operator(loc, RowLayout(mesh, nodal), outside, samples.distances)
    return PathResult(path.label, samples, A @ nodal.values, nodal.components, loc, nodal.method, region=region)


def _raw_values(field: GaussField, loc: Location):
    mesh = field.mesh
    out = np.full((len(loc), field.ncomponents), np.nan)
    for bi, b in enumerate(mesh.blocks):
        sel = np.flatnonzero(loc.block == bi)
        if not sel.size:
            continue
        E = local_field_matrix(b.element, field.points[b.name], loc.xi[sel])      # (t, q)
        out[sel] = np.einsum("tq,tqa->ta", E, field.values[b.name][loc.cell[sel]])
    return out


def raw_along(field: GaussField, path: Path, n=None, distances=None, region=None, outside="raise",
              locator: PointLocator | None = None, max_crossings=10000) -> PathResult:
    """The raw integration-point field along a path: in every cell the path
    crosses, that cell's own local field (the polynomial through its
    integration-point values, Hinton & Campbell 1974) at the path points in
    it.  Where consecutive samples lie in different cells the crossing is
    found by bisection (to 1e-10 of the path length) and sampled from both
    sides, so the curve shows the jump at every element boundary.

    Returns a :class:`PathResult` with ``method="raw"`` and ``pieces`` (the
    sample indices of each cell crossed, in order).
    """
    if not isinstance(field, GaussField):
        raise InputError("raw_along needs a GaussField (the integration-point values)")
    check_outside(outside)
    mesh = field.mesh
    s0 = path.sample(n, distances)
    if locator is None and not isinstance(path, EdgePath):
        locator = PointLocator.for_mesh(mesh)

    def locate(d):
        smp = path.sample(distances=d) if len(d) else None
        if smp is None:
            return np.zeros(0, np.int64), None
        loc = _locate_samples(mesh, path, smp, region, locator)
        return loc.key(), loc

    loc0 = _locate_samples(mesh, path, s0, region, locator)
    if not loc0.found.all() and outside == "raise":
        raise InputError(loc0.outside_message("points", s0.distances))
    d = s0.distances.copy()
    key = loc0.key()
    pair = np.zeros(len(d), dtype=bool)        # True: sample i and i+1 are the two sides of one crossing
    tol = 1e-10 * max(path.length, 1e-300)
    for _ in range(max_crossings):
        todo = np.flatnonzero((key[:-1] != key[1:]) & ~pair[:-1])
        if not todo.size:
            break
        lo, hi = d[todo].copy(), d[todo + 1].copy()
        ka = key[todo]
        khi = key[todo + 1].copy()
        for _ in range(200):
            act = hi - lo > tol
            if not act.any():
                break
            mid = 0.5 * (lo + hi)
            km, _ = locate(mid[act])
            same = km == ka[act]
            ia = np.flatnonzero(act)
            lo[ia[same]] = mid[act][same]
            hi[ia[~same]] = mid[act][~same]
            khi[ia[~same]] = km[~same]
        # insert (lo, A) and (hi, C) after each sample todo
        ins_at = np.repeat(todo + 1, 2)
        new_d = np.column_stack([lo, hi]).ravel()
        new_k = np.column_stack([ka, khi]).ravel()
        new_pair = np.column_stack([np.ones(len(lo), bool), np.zeros(len(lo), bool)]).ravel()
        d = np.insert(d, ins_at, new_d)
        key = np.insert(key, ins_at, new_k)
        pair = np.insert(pair, ins_at, new_pair)
    else:
        raise InputError(f"raw_along: more than {max_crossings} rounds of element crossings; sample more densely")
    samples = path.sample(distances=d)
    loc = _locate_samples(mesh, path, samples, region, locator)
    key = loc.key()
    vals = _raw_values(field, loc)
    breaks = np.flatnonzero(key[1:] != key[:-1]) + 1
    pieces = [p for p in np.split(np.arange(len(d)), breaks) if key[p[0]] >= 0]
    return PathResult(path.label, samples, vals, field.components, loc, "raw", pieces=pieces, region=region)
