"""Numbering of the unknowns of a nodal field: one per (node, region) pair,
or one per node when smoothing across regions.  Recovery, sampling along
paths, patch recovery and the error indicator share it."""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from toolkit.core.mesh import Mesh

__all__ = ["DofMap"]


class DofMap:
    """Numbering of the unknowns of a nodal field.

    ``cell_dofs[block]`` (m, k) are the unknowns of each cell; ``node`` and
    ``region`` (ndof,) say which node and region each unknown belongs to
    (region ``-1`` when smoothed across regions).  Unknowns are numbered in
    (node, region) order; nodes in no cell get none.
    """

    def __init__(self, mesh: Mesh, across_regions: bool = False):
        self.mesh = mesh
        regions = mesh.regions
        self.across_regions = bool(across_regions) or len(regions) == 1
        n = mesh.nnodes
        if self.across_regions:
            used = mesh.used_nodes()
            if used.all():
                self.cell_dofs = {b.name: b.cells for b in mesh.blocks}
                self.node = np.arange(n)
            else:
                number = np.cumsum(used) - 1
                self.cell_dofs = {b.name: number[b.cells].astype(b.cells.dtype) for b in mesh.blocks}
                self.node = np.flatnonzero(used)
            self.region = np.full(len(self.node), -1 if len(regions) > 1 else int(regions[0]))
        else:
            R = len(regions)
            table = np.zeros(n * R, dtype=bool)
            keys = {}
            for b in mesh.blocks:
                ridx = np.searchsorted(regions, b.regions)
                keys[b.name] = b.cells.astype(np.int64) * R + ridx[:, None]
                table[keys[b.name].ravel()] = True
            number = np.cumsum(table) - 1
            self.cell_dofs = {k: number[v].astype(np.int32 if table.sum() < 2**31 else np.int64)
                              for k, v in keys.items()}
            flat = np.flatnonzero(table)
            self.node = flat // R
            self.region = regions[flat % R]
        self.ndof = len(self.node)

    def renumbered(self, perm_new_of_old: np.ndarray) -> "DofMap":
        """A copy whose cell dofs use new numbers ``perm_new_of_old[old]``."""
        other = object.__new__(DofMap)
        other.__dict__.update(self.__dict__)
        other.cell_dofs = {k: perm_new_of_old[v].astype(v.dtype) for k, v in self.cell_dofs.items()}
        return other

    def scatter(self, name: str) -> sp.csc_matrix:
        """Sparse (ndof, m*k) matrix that adds per-cell-node rows into unknowns.
        Built in CSC form, which costs nothing: column j has its one entry at
        row ``cell_dofs.ravel()[j]``."""
        d = self.cell_dofs[name].ravel()
        return sp.csc_matrix((np.ones(d.size), d, np.arange(d.size + 1)), shape=(self.ndof, d.size))

    def locality(self) -> float:
        """Mean spread (max - min unknown number) per cell, relative to the
        spread a well-ordered mesh of this size has (about ndof^((d-1)/d))."""
        spans = [np.mean(np.ptp(v[:: max(1, len(v) // 20000)], axis=1)) for v in self.cell_dofs.values()]  # a sample
        d = self.mesh.dim
        return float(np.mean(spans)) / max(1.0, self.ndof ** ((d - 1) / d))
