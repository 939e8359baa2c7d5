"""Fields: values at integration points (GaussField) and at nodes (NodalField)."""
from __future__ import annotations

import numpy as np

from toolkit.errors import InputError
from toolkit.core.arrays import readonly
from toolkit.core.elements import QuadratureRule
from toolkit.core.mesh import Mesh

__all__ = ["GaussField", "NodalField", "RowLayout", "STRESS_2D", "STRESS_3D"]

STRESS_2D = ("sxx", "syy", "sxy")
STRESS_3D = ("sxx", "syy", "szz", "sxy", "syz", "sxz")


class GaussField:
    """Values at the integration points of every cell.

    Parameters
    ----------
    mesh : Mesh
    values : dict ``{block name: array (cells, points, components)}``; every
        block of the mesh must be present (nothing is silently left out).
    components : sequence of str, e.g. ``("sxx", "syy", "sxy")``
    points : where the values sit, per block (a dict) or one spec for all:
        ``"full"`` (default) or ``"reduced"`` (the element's rules, in their
        documented order), a point count, a :class:`QuadratureRule`, or
        natural coordinates (points, dim).
    name : str, a label such as ``"stress"``.

    Examples
    --------
    The field ``sxx = 100 + 10 x`` (MPa, x in mm) at the 2x2 Gauss points of
    two quad4 cells; a field the elements can represent is projected exactly
    (Hinton & Campbell 1974):

    >>> import numpy as np
    >>> from toolkit import Mesh, project_l2
    >>> mesh = Mesh([[0, 0], [2, 0], [2, 1], [0, 1], [4, 0], [4, 1]],
    ...             {"quad4": [[0, 1, 2, 3], [1, 4, 5, 2]]})
    >>> x = mesh.geometry("quad4", "full").x_cqi[..., 0]      # (cells, points)
    >>> field = GaussField(mesh, {"quad4": (100 + 10 * x)[..., None]}, components=("sxx",))
    >>> field
    GaussField('field', components ('sxx',), quad4: 2x4 at gauss 2x2)
    >>> project_l2(field).values[:, 0].round(9).tolist()
    [100.0, 120.0, 120.0, 100.0, 140.0, 140.0]
    """

    def __init__(self, mesh: Mesh, values, components, points="full", name="field"):
        if not isinstance(mesh, Mesh):
            raise InputError("GaussField needs a Mesh as its first argument")
        self.mesh = mesh
        components = tuple(str(c) for c in components)
        if not components or len(set(components)) != len(components):
            raise InputError(f"components must be distinct names, got {components}")
        self.components = components
        self.name = str(name)
        if not isinstance(values, dict):
            raise InputError("values must be a dict {block name: array (cells, points, components)}")
        given = {mesh.block(k).name: v for k, v in values.items()}
        missing = [b.name for b in mesh.blocks if b.name not in given]
        if missing:
            raise InputError(f"values missing for block(s) {', '.join(missing)}")
        self.values: dict[str, np.ndarray] = {}
        self.points: dict[str, np.ndarray] = {}
        self.rule_labels: dict[str, str] = {}
        for b in mesh.blocks:
            spec = points.get(b.name, points.get(b.element.name, "full")) if isinstance(points, dict) else points
            pts, label = self._resolve_points(b, spec)
            v = np.asarray(given[b.name], dtype=float)
            want = (len(b), len(pts), len(components))
            if v.ndim == 2 and len(components) == 1:
                v = v[..., None]
            if v.shape != want:
                raise InputError(f"block {b.name}: values shaped {v.shape}, expected (cells, points, components) "
                                 f"= {want} for {label}")
            bad = ~np.isfinite(v)
            if bad.any():
                c, q, a = (int(i[0]) for i in np.nonzero(bad))
                raise InputError(f"{b.label(c)}: value of {components[a]} at point {q} is {v[c, q, a]} "
                                 f"({int(bad.sum())} non-finite values in the block)")
            self.values[b.name] = readonly(v)
            self.points[b.name] = readonly(pts)
            self.rule_labels[b.name] = label

    @staticmethod
    def _resolve_points(b, spec):
        et = b.element
        if isinstance(spec, (str, int, np.integer, QuadratureRule)):
            r = et.rule(spec)
            return r.points, r.name
        pts = et.check_points(spec)
        inside = et.contains(pts, tol=1e-6)
        if not inside.all():
            raise InputError(f"block {b.name}: integration point {int(np.flatnonzero(~inside)[0])} lies outside "
                             f"the reference {et.shape}")
        return pts, f"{len(pts)} given points"

    @property
    def ncomponents(self) -> int:
        return len(self.components)

    def component(self, name) -> dict[str, np.ndarray]:
        """One component per block, (cells, points)."""
        a = self.components.index(name)
        return {k: v[..., a] for k, v in self.values.items()}

    def physical_points(self) -> dict[str, np.ndarray]:
        """Coordinates of every value, per block (cells, points, dim)."""
        return {k: self.mesh.geometry(k, self.points[k]).x_cqi for k in self.values}

    def __repr__(self):
        parts = ", ".join(f"{k}: {v.shape[0]}x{v.shape[1]} at {self.rule_labels[k]}" for k, v in self.values.items())
        return f"GaussField({self.name!r}, components {self.components}, {parts})"


class RowLayout:
    """Maps (node, region of the cell) to a row of a nodal field.

    ``layout`` is a :class:`NodalField` or a :class:`~toolkit.recovery.DofMap`
    (anything with ``node`` and ``region`` arrays).  Where every node has
    one row the region is ignored; where nodes carry one row per region the
    row of the cell's region is used.
    """

    def __init__(self, mesh: Mesh, layout):
        if isinstance(layout, NodalField) and layout.mesh is not mesh:
            raise InputError("the nodal field belongs to another mesh")
        try:
            node = np.asarray(layout.node, dtype=np.int64)
            region = np.asarray(layout.region, dtype=np.int64)
        except AttributeError:
            raise InputError("rows must be a NodalField or a DofMap (with node and region arrays)") from None
        self.mesh = mesh
        self.nrows = len(node)
        if node.size and (node.min() < 0 or node.max() >= mesh.nnodes):
            raise InputError(f"row layout refers to node rows outside 0..{mesh.nnodes - 1}")
        counts = np.bincount(node, minlength=mesh.nnodes)
        self.split = bool(counts.max(initial=0) > 1)
        if not self.split:
            self._by_node = np.full(mesh.nnodes, -1, dtype=np.int64)
            self._by_node[node] = np.arange(len(node))
        else:
            self._regions = np.unique(region)
            R = len(self._regions)
            keys = node * R + np.searchsorted(self._regions, region)
            order = np.argsort(keys, kind="stable")
            self._keys, self._rows, self._R = keys[order], order, R
            if np.any(np.diff(self._keys) == 0):
                raise InputError("row layout has two rows for one (node, region) pair")

    def lookup(self, nodes, regions) -> np.ndarray:
        """Rows for node rows ``nodes`` of cells in ``regions`` (broadcast)."""
        nodes = np.asarray(nodes, dtype=np.int64)
        if not self.split:
            rows = self._by_node[nodes]
            bad = rows < 0
            if bad.any():
                raise InputError(f"node {int(self.mesh.node_ids[nodes[bad].ravel()[0]])} has no row in the nodal "
                                 f"field ({int(bad.sum())} such entries)")
            return rows
        regions = np.broadcast_to(np.asarray(regions, dtype=np.int64), nodes.shape)
        ri = np.searchsorted(self._regions, regions)
        ok = (ri < self._R) & (self._regions[np.minimum(ri, self._R - 1)] == regions)
        keys = nodes * self._R + np.minimum(ri, self._R - 1)
        pos = np.minimum(np.searchsorted(self._keys, keys), len(self._keys) - 1)
        ok &= self._keys[pos] == keys
        if not ok.all():
            i = np.argwhere(~ok)[0]
            raise InputError(f"the nodal field has no row for node {int(self.mesh.node_ids[nodes[tuple(i)]])} in "
                             f"region {int(regions[tuple(i)])} ({int((~ok).sum())} such entries); "
                             "was it recovered on another region split?")
        return self._rows[pos]


class NodalField:
    """A continuous field: one value per (node, region) row.

    For a mesh with one region (or a field smoothed across regions) there is
    one row per used node, in node order, so ``values`` is (n, components).
    Where a field is not smoothed across region boundaries, a node shared by
    two regions has one row for each; ``split_nodes`` lists them.

    Attributes
    ----------
    values : (rows, components)
    node : (rows,) node row numbers
    region : (rows,) region ids (``-1``: smoothed across all regions)
    components, method, info (solver details such as iterations)
    """

    def __init__(self, mesh: Mesh, values, components, node, region, method="", info=None):
        self.mesh = mesh
        self.values = readonly(np.asarray(values, dtype=float))
        self.components = tuple(components)
        self.node = readonly(np.asarray(node, dtype=np.int64))
        self.region = readonly(np.asarray(region, dtype=np.int64))
        self.method = method
        self.info = dict(info or {})
        r = len(self.node)
        if self.values.shape != (r, len(self.components)) or self.region.shape != (r,):
            raise InputError(f"NodalField: values {self.values.shape}, node {self.node.shape}, region "
                             f"{self.region.shape} do not match {len(self.components)} components")

    @property
    def split_nodes(self) -> np.ndarray:
        """Nodes that carry more than one value (one per region)."""
        counts = np.bincount(self.node, minlength=self.mesh.nnodes)
        return np.flatnonzero(counts > 1)

    @property
    def unused_nodes(self) -> np.ndarray:
        """Nodes that belong to no cell and so carry no value."""
        counts = np.bincount(self.node, minlength=self.mesh.nnodes)
        return np.flatnonzero(counts == 0)

    def to_array(self, region=None) -> np.ndarray:
        """Values as (n, components) in node order.  With ``region`` given,
        that region's values (NaN for nodes outside it).  Without it, every
        node must carry exactly one value; nodes in no cell are NaN."""
        out = np.full((self.mesh.nnodes, len(self.components)), np.nan)
        if region is None:
            if self.split_nodes.size:
                raise InputError(f"{self.split_nodes.size} nodes carry one value per region "
                                 "(not smoothed across region boundaries): pass region=...")
            out[self.node] = self.values
        else:
            sel = self.region == region
            if not sel.any():
                raise InputError(f"no values for region {region}; regions here: {np.unique(self.region).tolist()}")
            out[self.node[sel]] = self.values[sel]
        return out

    def component(self, name, region=None) -> np.ndarray:
        return self.to_array(region)[:, self.components.index(name)]

    def cell_rows(self, block) -> np.ndarray:
        """Rows of ``values`` that belong to each cell's nodes, (m, k): the
        row of (node, the cell's region), or of the node alone when the field
        is smoothed across regions.  Evaluate the field inside cell ``c``
        with ``N @ values[cell_rows[c]]``."""
        b = self.mesh.block(block)
        return RowLayout(self.mesh, self).lookup(b.cells, b.regions[:, None])

    def __repr__(self):
        s = (f"NodalField({self.method or 'nodal'}: {len(self.node)} rows x {len(self.components)} "
             f"components {self.components}")
        if self.split_nodes.size:
            s += (f"; {self.split_nodes.size} nodes on region boundaries carry one value per region "
                  "(not smoothed across regions)")
        if self.unused_nodes.size:
            s += f"; {self.unused_nodes.size} nodes in no cell have no value"
        return s + ")"
