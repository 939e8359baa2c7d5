"""The 2D linear-elastic solve (plane stress, plane strain, axisymmetric)
and its result record.

The displacement method (Zienkiewicz & Taylor, *The Finite Element Method*,
vol. 1, ch. 2-6): ``K u = f`` with ``K = Σ_e ∫ B^T D B dΩ`` assembled over
all cells at once (no per-element Python loop), supports applied by
eliminating constrained directions, one sparse direct factorisation
(SuperLU via ``scipy.sparse.linalg.splu``), and stresses ``σ = D B u_e`` at
the integration points of the rule used for the stiffness.  :func:`solve`
runs these steps in turn; the material and component tables live in
:mod:`toolkit.fem.material`, loads in :mod:`toolkit.fem.loads`, supports and
constraints in :mod:`toolkit.fem.supports`, element matrices in
:mod:`toolkit.fem.elasticity`.  Named edges and points come from the
mesher's model object (``model.edges``, ``model.points``) or are passed as
``edges=`` / ``points=``.
"""
from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np

from toolkit.errors import InputError
from toolkit.core.fields import GaussField
from toolkit.core.assembly import assemble_csr, default_threads
from toolkit.core.mesh import Mesh
from toolkit.fem.elasticity import element_stiffness, stress_and_strain
from toolkit.fem.loads import load_vector
from toolkit.fem.locations import nodes_of
from toolkit.fem.material import ANALYSES, STRAIN_COMPONENTS, STRESS_COMPONENTS, materials_by_region
from toolkit.fem.supports import check_rigid_modes, constraint_rows, constraint_transformation

__all__ = ["Solution", "solve"]


@dataclass(eq=False)
class Solution:
    """Result of :func:`solve`.

    Attributes
    ----------
    mesh : Mesh
    analysis : str
    u : (n, 2) nodal displacements (NaN at nodes in no cell)
    stress, strain : GaussField at the integration points of ``rule``
        (components in :data:`STRESS_COMPONENTS` / :data:`STRAIN_COMPONENTS`)
    reactions : (n, 2) support forces ``K u - f`` at supported nodes, zero elsewhere
    forces : (n, 2) applied nodal forces
    strain_energy : ``½ uᵀ K u``
    info : sizes and times in seconds (``time_assembly``: element matrices,
        sparse assembly and support reduction; ``time_factorisation``;
        ``time_pivot_check``: reading the factor's pivots for the mechanism
        check; ``time_solve``: triangular solves; ``time_recovery``: stresses)
    """

    mesh: Mesh
    analysis: str
    u: np.ndarray
    stress: GaussField
    strain: GaussField
    reactions: np.ndarray
    forces: np.ndarray
    strain_energy: float
    thickness: float | None
    info: dict = field(default_factory=dict)
    edges: dict = field(default_factory=dict, repr=False)
    points: dict = field(default_factory=dict, repr=False)

    def reaction(self, where) -> np.ndarray:
        """Total support force (2,) over the nodes of a named edge or point
        (or an array of node rows)."""
        nodes = nodes_of(where, self.mesh, self.edges, self.points, "reaction")
        return self.reactions[nodes].sum(axis=0)

    def __repr__(self):
        i = self.info
        return (f"Solution({self.analysis}, {i.get('ndof')} dof ({i.get('nfree')} free), "
                f"max |u| {np.nanmax(np.abs(self.u)):.4g}, strain energy {self.strain_energy:.6g}, "
                f"stress at {self.info.get('rule')} rule)")


# ---------------------------------------------------------------------------
# The steps of solve()
# ---------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class _Problem:
    """What :func:`solve` works on: the model's settings merged with the
    arguments and checked."""

    mesh: Mesh
    analysis: str
    thickness: float | None
    materials: dict
    loads: list
    supports: list
    rule: object
    edges: dict
    points: dict


def _model_settings(model) -> tuple[Mesh, dict]:
    """The mesh of ``model`` and its own settings (none for a bare Mesh)."""
    if isinstance(model, Mesh):
        return model, dict(edges={}, points={}, analysis=None, thickness=None, loads=None, supports=None,
                           material=None)
    if hasattr(model, "mesh") and isinstance(model.mesh, Mesh):
        return model.mesh, dict(edges=dict(getattr(model, "edges", {}) or {}),
                                points=dict(getattr(model, "points", {}) or {}),
                                analysis=getattr(model, "analysis", None),
                                thickness=getattr(model, "thickness", None),
                                loads=getattr(model, "loads", None),
                                supports=getattr(model, "supports", None),
                                material=getattr(model, "material", None))
    raise InputError("solve needs a Mesh or a model object with a .mesh")


def _check_plane_mesh(mesh):
    if mesh.dim != 2:
        raise InputError(f"solve handles 2D meshes; this mesh is {mesh.dim}D")
    for b in mesh.blocks:
        if b.element.shape not in ("tri", "quad"):
            raise InputError(f"block {b.name}: not a 2D element type")


def _resolve_thickness(mesh, analysis, thickness, model_thickness):
    """The plane thickness (default 1), or None for axisymmetry, whose mesh
    must lie at r >= 0."""
    if analysis == "axisymmetric":
        if thickness is not None:
            raise InputError("thickness does not apply to an axisymmetric analysis (integrals are over the full "
                             "ring, 2πr); leave it out")
        if (mesh.nodes[mesh.used_nodes(), 0] < -1e-12 * np.ptp(mesh.nodes[:, 0])).any():
            raise InputError("axisymmetric analysis: coordinate 0 is the radius and must be >= 0; "
                             f"node {int(np.argmin(mesh.nodes[:, 0]))} has r = {mesh.nodes[:, 0].min():.4g}")
        return None
    thick = float(thickness if thickness is not None else (model_thickness if model_thickness is not None else 1.0))
    if not (np.isfinite(thick) and thick > 0):
        raise InputError(f"thickness must be positive, got {thick}")
    return thick


def _resolve_problem(model, materials, analysis, thickness, loads, supports, rule, edges, points) -> _Problem:
    """Merge the arguments over the model's settings, check them and give
    every region its material."""
    mesh, own = _model_settings(model)
    _check_plane_mesh(mesh)
    edges_all = {**own["edges"], **(edges or {})}
    points_all = {**own["points"], **(points or {})}
    analysis = analysis if analysis is not None else own["analysis"]
    if analysis not in ANALYSES:
        raise InputError(f"analysis must be one of {ANALYSES}, got {analysis!r}")
    thick = _resolve_thickness(mesh, analysis, thickness, own["thickness"])
    materials = materials if materials is not None else own["material"]
    if materials is None:
        raise InputError("no material: pass materials=Material(E, nu) or {region: Material}")
    mats = materials_by_region(mesh, materials)
    loads = list(loads if loads is not None else (own["loads"] or []))
    supports = list(supports if supports is not None else (own["supports"] or []))
    if isinstance(rule, str) and rule not in ("full", "reduced"):
        raise InputError(f"rule must be 'full', 'reduced' or a point count, got {rule!r}")
    return _Problem(mesh, analysis, thick, mats, loads, supports, rule, edges_all, points_all)


def _constrain(p: _Problem, f, used, info):
    """Supports -> the transformation ``u = T v + u_p`` onto the free
    directions, after checking that supports and loads act on nodes of cells
    and that no part can move as a rigid body.  Nodes in no cell have no
    stiffness and get no unknowns (their displacement is NaN)."""
    cn, cd, cv = constraint_rows(p.mesh, p.supports, p.edges, p.points)
    if (~used[cn]).any():
        raise InputError(f"a support acts on node {int(cn[~used[cn]][0])}, which belongs to no cell")
    if (np.abs(f[~used]) > 0).any():
        raise InputError(f"a load acts on node {int(np.flatnonzero((np.abs(f) > 0).any(1) & ~used)[0])}, "
                         "which belongs to no cell")
    check_rigid_modes(p.mesh, cn, cd, p.analysis, used)
    T, up, kind, selection = constraint_transformation(p.mesh, cn, cd, cv)
    if not used.all():
        keep_cols = np.ones(T.shape[1], dtype=bool)
        unused_dofs = np.flatnonzero(np.repeat(~used, 2))
        Tc = T.tocsr()
        drop = np.unique(Tc[unused_dofs].indices)
        keep_cols[drop] = False
        T = T[:, keep_cols]
        info["unused_nodes"] = int((~used).sum())
    return T, up, kind, selection


def _assemble_stiffness(p: _Problem):
    """Global stiffness (2n, 2n) CSR from every block's element matrices,
    degrees of freedom ordered (node, component)."""
    n = p.mesh.nnodes
    cdofs, mats_e = [], []
    for b in p.mesh.blocks:
        Ke = element_stiffness(p.mesh, b, p.rule, p.analysis, p.thickness, p.materials)
        m, k = b.cells.shape
        d = np.empty((m, 2 * k), dtype=np.int64 if 2 * n > 2**31 - 1 else np.int32)
        d[:, 0::2] = 2 * b.cells
        d[:, 1::2] = 2 * b.cells + 1
        cdofs.append(d); mats_e.append(Ke.reshape(m, -1))
        del Ke
    return assemble_csr(cdofs, mats_e, 2 * n, threads=default_threads(2 * n))


def _reduce(K, f, T, up, selection):
    """Reduced system ``Tᵀ K T v = Tᵀ (f - K u_p)``; a plain selection of
    rows and columns when T only picks degrees of freedom."""
    rhs_full = f.ravel() - (K @ up if np.any(up) else 0.0)
    if selection:
        free = T.tocsc().indices
        return K[free][:, free], rhs_full[free]
    return (T.T @ K @ T).tocsr(), T.T @ rhs_full


def _factor_and_solve(Kr, br, info) -> np.ndarray:
    """Factorise the reduced stiffness (SuperLU, symmetric mode), refuse a
    mechanism (singular factor or tiny pivots), solve and check the
    residual."""
    t1 = time.perf_counter()
    from scipy.sparse.linalg import splu
    if Kr.shape[0] == 0:
        v = np.zeros(0)
        t2 = t2c = t3 = time.perf_counter()
    else:
        Kc = Kr.tocsc()
        try:
            lu = splu(Kc, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0, options={"SymmetricMode": True})
        except RuntimeError as exc:
            raise InputError(f"the stiffness matrix is singular ({exc}): the model is a mechanism (parts held by "
                             "nothing, or zero-energy modes of reduced integration); check supports and rule") from None
        t2 = time.perf_counter()
        piv = np.abs(lu.U.diagonal())
        t2b = time.perf_counter()
        if not np.isfinite(piv).all() or piv.min() <= 1e-11 * piv.max():
            raise InputError(f"the stiffness matrix is singular (smallest pivot {piv.min():.3g} against largest "
                             f"{piv.max():.3g}): the model is a mechanism (zero-energy modes of reduced integration, "
                             "or parts held by nothing); check supports and rule")
        t2c = time.perf_counter()
        v = lu.solve(br)
        t3 = time.perf_counter()
        info["time_pivot_check"] = t2b - t2
        res = np.linalg.norm(Kr @ v - br)
        bn = np.linalg.norm(br)
        info["relative_residual"] = float(res / bn) if bn > 0 else float(res)
        if bn > 0 and res > 1e-6 * bn:
            raise InputError(f"the solve did not settle (relative residual {res / bn:.3g}): the stiffness is "
                             "ill-conditioned or singular; check supports, materials and the mesh")
    info["time_factorisation"] = t2 - t1
    info["time_solve"] = t3 - t2c
    return v


def _displacements_and_reactions(K, f, T, v, up, kind, used):
    """Nodal displacements ``u = T v + u_p`` (n, 2) (NaN at nodes in no
    cell), reactions ``K u - f`` at supported nodes and the strain energy
    ``½ uᵀ K u``."""
    n = len(kind)
    u = (T @ v + up)
    fint = K @ u
    strain_energy = 0.5 * float(u @ fint)
    U = u.reshape(n, 2).copy()
    R = (fint - f.ravel()).reshape(n, 2)
    R[kind == 0] = 0.0
    U[~used] = np.nan
    return U, R, strain_energy


def _recover(p: _Problem, U):
    """Stress and strain GaussFields at the integration points of the rule."""
    sig, eps = {}, {}
    for b in p.mesh.blocks:
        s_, e_ = stress_and_strain(p.mesh, b, p.rule, p.analysis, p.thickness, p.materials, np.nan_to_num(U))
        sig[b.name], eps[b.name] = s_, e_
    stress = GaussField(p.mesh, sig, STRESS_COMPONENTS[p.analysis], points=p.rule, name="stress")
    strain = GaussField(p.mesh, eps, STRAIN_COMPONENTS[p.analysis], points=p.rule, name="strain")
    return stress, strain


# ---------------------------------------------------------------------------
# solve
# ---------------------------------------------------------------------------
def solve(model, materials=None, analysis=None, thickness=None, loads=None, supports=None, rule="full",
          edges=None, points=None) -> Solution:
    """Solve a 2D linear-elastic problem.

    Parameters
    ----------
    model : Mesh, or a model object from :mod:`toolkit.fem.models` (with
        ``mesh``, ``edges``, ``points``, ``analysis``, ``thickness``,
        ``loads``, ``supports``, ``material``); arguments given here override
        the model's.
    materials : Material or {region id: Material}
    analysis : ``"plane_stress"``, ``"plane_strain"`` or ``"axisymmetric"``
    thickness : plane problems only (default 1.0)
    loads : list of Traction, Pressure, PointLoad
    supports : list of Fixed, Roller, Displacement
    rule : ``"full"`` or ``"reduced"`` (or a point count), for the stiffness
        and the stress points
    edges, points : named edges {name: (m, 2|3) node tuples} and points
        {name: node row}, added to the model's

    Returns
    -------
    Solution

    Raises
    ------
    ValueError for bad input, supports that leave a rigid-body mode free, or
    a singular stiffness (a mechanism, e.g. hourglass modes of reduced
    integration, or a part held by nothing).
    """
    t_start = time.perf_counter()
    p = _resolve_problem(model, materials, analysis, thickness, loads, supports, rule, edges, points)
    mesh = p.mesh
    n = mesh.nnodes
    used = mesh.used_nodes()
    info = {"analysis": p.analysis, "rule": p.rule, "nnodes": n, "ncells": mesh.ncells, "ndof": 2 * n}

    f = load_vector(mesh, p.loads, p.edges, p.points, p.analysis, p.thickness)
    T, up, kind, selection = _constrain(p, f, used, info)

    t0 = time.perf_counter()
    K = _assemble_stiffness(p)
    Kr, br = _reduce(K, f, T, up, selection)
    t1 = time.perf_counter()
    info["time_assembly"] = t1 - t0
    info["nfree"] = int(Kr.shape[0])
    info["nnz"] = int(K.nnz)

    v = _factor_and_solve(Kr, br, info)
    t3 = time.perf_counter()
    U, R, strain_energy = _displacements_and_reactions(K, f, T, v, up, kind, used)
    stress, strain = _recover(p, U)
    t4 = time.perf_counter()
    info["time_recovery"] = t4 - t3
    info["time_total"] = t4 - t_start
    return Solution(mesh, p.analysis, U, stress, strain, R, f, strain_energy, p.thickness, info, p.edges, p.points)
