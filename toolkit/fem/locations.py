"""Resolving where a load or support acts: a named edge or point of the
model, node rows, a boolean node mask or the coordinates of a node, turned
into node rows (or edge node tuples)."""
from __future__ import annotations

import numpy as np

from toolkit.errors import InputError
from toolkit.fem.edges import as_edges

__all__ = ["nodes_of", "edge_of"]


def nodes_of(where, mesh, edges, points, label) -> np.ndarray:
    """Node rows named by ``where``: an edge or point name (looked up in
    ``edges`` / ``points``), a node row, node rows, a boolean mask over the
    nodes, or ``(x, y)`` coordinates of a node.  ``label`` starts the error
    messages."""
    if isinstance(where, str):
        if where in edges:
            return np.unique(as_edges(edges[where], f"edge {where!r}"))
        if where in points:
            return np.atleast_1d(np.asarray(points[where], dtype=np.int64))
        raise InputError(f"{label}: no edge or point named {where!r}; edges: {sorted(edges)}, points: {sorted(points)}")
    if isinstance(where, (int, np.integer)):
        nodes = np.array([int(where)])
    else:
        a = np.asarray(where)
        if a.dtype == bool:
            if a.shape != (mesh.nnodes,):
                raise InputError(f"{label}: a boolean node mask must have {mesh.nnodes} entries")
            nodes = np.flatnonzero(a)
        elif np.issubdtype(a.dtype, np.integer):
            nodes = np.unique(a.ravel())
        elif a.shape == (2,):
            return np.array([_node_at(mesh, a, label)])
        else:
            raise InputError(f"{label}: give a name, node rows, a boolean mask or (x, y) coordinates, got {where!r}")
    if nodes.size == 0:
        raise InputError(f"{label}: empty node set")
    if nodes.min() < 0 or nodes.max() >= mesh.nnodes:
        raise InputError(f"{label}: node row out of range 0..{mesh.nnodes - 1}")
    return nodes


def _node_at(mesh, xy, label):
    d = np.linalg.norm(mesh.nodes - np.asarray(xy, dtype=float), axis=1)
    i = int(np.argmin(d))
    size = float(np.ptp(mesh.nodes, axis=0).max())
    if d[i] > 1e-9 * size:
        raise InputError(f"{label}: no node at {tuple(np.asarray(xy).tolist())} (nearest node {i} at distance {d[i]:.3g})")
    return i


def edge_of(where, edges, label):
    """Edge node tuples of a named edge in ``edges``, or the tuples given."""
    if isinstance(where, str):
        if where not in edges:
            raise InputError(f"{label}: no edge named {where!r}; edges: {sorted(edges)}")
        return as_edges(edges[where], f"edge {where!r}")
    return as_edges(where, label)
