"""Global L2 projection of integration-point values to a continuous nodal
field, consistent and HRZ-lumped, with the call shape ``method(field,
across_regions=False) -> NodalField`` that averaging and SPR share:

* :func:`project_l2` — global L2 projection (Hinton & Campbell 1974): find
  nodal values ``a`` minimising ``∫ (N a - G)^2 dΩ`` over the whole structure,
  i.e. solve ``C a = b`` with ``C = Σ_e ∫ N^T N dΩ`` and ``b = Σ_e ∫ N^T G dΩ``,
  one column per component, all columns at once.  ``G`` is each element's
  local field, the polynomial through its integration-point values.
* ``project_l2(field, lumped=True)`` — the projection with the inner product
  evaluated by the HRZ nodal quadrature (Hinton, Rock & Zienkiewicz 1976):
  the mass matrix becomes the diagonal of HRZ masses m_a^e (every one
  positive) and the right-hand side the same quadrature of the local field,
  b_a = Σ_e m_a^e G_e(x_a).  So each nodal value is the HRZ-weighted mean of
  the cells' local fields at that node; constants (and linear fields, where
  the local field is linear) are reproduced.  Pairing the lumped matrix with
  the consistent right-hand side instead fails even for constants on quad8
  and tri6, whose corner shape functions integrate to a negative value or
  zero.

By default nothing is smoothed across region boundaries: a node shared by two
regions gets one value per region.  ``across_regions=True`` smooths across
everything.

:class:`L2Projector` is built once per mesh (dof numbering, optional
renumbering for locality, mass matrix, preconditioner or factor) and projects
any number of fields.
"""
from __future__ import annotations

import time

import numpy as np

from toolkit.errors import InputError
from toolkit.core.arrays import chunk_slices
from toolkit.core.assembly import QuadratureSum, assemble_many, default_threads, per_cell, sum_to_unknowns
from toolkit.core.cases import LoadCases
from toolkit.core.cg import CGLayout, block_cg
from toolkit.core.elements import local_field_exponents, local_field_matrix, rule_of_degree
from toolkit.core.fields import GaussField, NodalField
from toolkit.core.mesh import Mesh
from toolkit.core.numbering import DofMap
from toolkit.recovery.preconditioner import PRECONDITIONERS, element_preconditioner, resolve_preconditioner
from toolkit.recovery.renumber import locality_permutation

__all__ = ["L2Projector", "project_l2", "rhs_rule"]


# ---------------------------------------------------------------------------
# Rules
# ---------------------------------------------------------------------------
def rhs_rule(element, npoints: int):
    """Rule exact for ``∫ N^T G dΩ`` on straight-edged elements, with G the
    local field through ``npoints`` values."""
    _, gdeg = local_field_exponents(element.shape, npoints)
    ndeg = element.total_degree if element.is_simplex else element.degree
    return rule_of_degree(element.shape, ndeg + gdeg + element.detj_degree)


# ---------------------------------------------------------------------------
# The projector
# ---------------------------------------------------------------------------
class L2Projector:
    """Global L2 projection onto the mesh's nodal space, built once per mesh.

    Parameters
    ----------
    mesh : Mesh
    lumped : bool
        Use HRZ nodal quadrature (diagonal, every nodal mass positive; see
        the module notes) instead of the consistent mass matrix.
    across_regions : bool
        Smooth across region boundaries (default: one value per region at
        shared nodes).
    solver : ``"cg"`` (default; preconditioned block CG) or ``"direct"``
        (sparse LU, factorised once).
    rtol : relative residual for ``"cg"`` (default 1e-10).
    preconditioner : for ``"cg"``: ``"element"`` (the cells' exact inverse
        mass matrices at unit measure, assembled with weights by measure
        share; see
        :func:`~toolkit.recovery.preconditioner.element_preconditioner`),
        ``"jacobi"`` (the diagonal), or ``"auto"`` (default: ``"element"``,
        measured fastest in wall time for every element type).
    renumber : ``"auto"`` (renumber in Z-order of the node positions when the
        numbering is scattered), ``True`` or ``False``.
    threads : threads for the assembly and the conjugate-gradient loop
        (default: 1 below 50 000 unknowns, else the number of cores, at
        most 4).

    The mass matrix uses each type's mass rule, exact for N^T N det J on
    straight-edged elements (quad4 2x2, quad8/9 3x3, tri3 3, tri6 6, tet4 4,
    tet10 14, hex8 3x3x3, hex20 4x4x4 points).

    Examples
    --------
    One projector for two load cases on a 4 x 3 mesh; a field the elements
    can represent (here linear) comes back exactly at the nodes:

    >>> import numpy as np
    >>> from toolkit import GaussField, L2Projector
    >>> from toolkit.core.grid import rectangle_mesh
    >>> mesh = rectangle_mesh("quad4", 4, 3, distort=0.2)
    >>> x = mesh.geometry("quad4", "full").x_cqi                 # (cells, points, 2)
    >>> projector = L2Projector(mesh)
    >>> projector
    L2Projector(20 unknowns, consistent, cg, original numbering)
    >>> for scale in (1.0, 2.5):
    ...     field = GaussField(mesh, {"quad4": scale * (50 + 10 * x[..., :1] - 4 * x[..., 1:])}, ("sxx",))
    ...     nodal = projector.project(field)
    ...     exact = scale * (50 + 10 * mesh.nodes[:, 0] - 4 * mesh.nodes[:, 1])
    ...     print(bool(np.allclose(nodal.values[:, 0], exact, rtol=1e-9)))
    True
    True
    """

    def __init__(self, mesh: Mesh, lumped=False, across_regions=False, solver="cg", rtol=1e-10,
                 maxiter=None, renumber="auto", threads=None, preconditioner="auto"):
        if not isinstance(mesh, Mesh):
            raise InputError("L2Projector needs a Mesh")
        if solver not in ("cg", "direct"):
            raise InputError(f"solver must be 'cg' or 'direct', got {solver!r}")
        if renumber not in ("auto", True, False):
            raise InputError(f"renumber must be 'auto', True or False, got {renumber!r}")
        if preconditioner not in PRECONDITIONERS:
            raise InputError(f"preconditioner must be one of {', '.join(PRECONDITIONERS)}, got {preconditioner!r}")
        if not (0 < rtol < 1):
            raise InputError(f"rtol must lie in (0, 1), got {rtol}")
        t0 = time.perf_counter()
        self.mesh = mesh
        self.lumped = bool(lumped)
        self.solver = solver
        self.rtol = float(rtol)
        self.maxiter = maxiter
        self.preconditioner = resolve_preconditioner(preconditioner, mesh)
        self._parts = None
        base = DofMap(mesh, across_regions)
        self.locality = base.locality()
        self.renumbered = bool(renumber is True or (renumber == "auto" and not lumped and self.locality > 8.0))
        if self.renumbered:
            self._new_of_old = locality_permutation(base)
            self.dofs = base.renumbered(self._new_of_old)
        else:
            self._new_of_old = None
            self.dofs = base
        self._scatter = {b.name: self.dofs.scatter(b.name) for b in mesh.blocks}
        self._rhs_cache: dict = {}
        self._hrz: dict = {}
        self._lumped_diagonal = None
        self.threads = int(threads) if threads else default_threads(self.dofs.ndof)
        self._assemble()
        self.setup_time = time.perf_counter() - t0

    # -- assembly ------------------------------------------------------------
    def _assemble(self):
        """Mass matrix C = Σ_e ∫ N^T N dΩ (consistent) and the
        conjugate-gradient preconditioner (or the LU factor)."""
        ndof = self.dofs.ndof
        self.matrix = self._precond = self._factor = None
        if self.lumped:
            self.diagonal = self.lumped_diagonal
            return
        matrices = [self._cell_mass(b.name) for b in self.mesh.blocks]   # C_e = Σ_q dV N_q N_q^T, never stored
        cell_dofs = [self.dofs.cell_dofs[b.name] for b in self.mesh.blocks]
        # the diagonal first (a cheap sum over the cells), so the preconditioner can be scaled before assembly
        diag = sum_to_unknowns(cell_dofs, [Me.diagonal() for Me in matrices], ndof)
        self.diagonal = diag
        values = [matrices]
        if self.solver == "cg" and self.preconditioner == "element":
            # cells' blocks |e| Bu (Bu = unit_mass_inverse) weighted by measure share, assembled with C in one pass
            values.append(element_preconditioner([b.element for b in self.mesh.blocks], matrices, cell_dofs, ndof))
        mats = assemble_many(cell_dofs, values, ndof, threads=self.threads)
        del matrices, values
        self.matrix = mats[0]
        if self.solver == "direct":
            from scipy.sparse.linalg import splu
            self._factor = splu(self.matrix.tocsc())
        elif self.preconditioner == "element":
            self._precond = mats[1]
        else:
            self._precond = 1.0 / self.diagonal

    def hrz_masses(self, name) -> np.ndarray:
        """HRZ nodal masses of every cell of block ``name`` (c, k): the
        consistent matrix's diagonal scaled to the cell's measure (Hinton,
        Rock & Zienkiewicz 1976); every one positive."""
        hrz = self._hrz.get(name)
        if hrz is None:
            Me = self._cell_mass(name)
            d = Me.diagonal()
            hrz = d * (Me.measures() / (d @ np.ones(d.shape[1])))[:, None]
            self._hrz[name] = hrz
        return hrz

    def _cell_mass(self, name) -> QuadratureSum:
        """The cells' mass matrices of block ``name`` in factored form."""
        g = self.mesh.geometry(name, "mass")
        return QuadratureSum(g.dV_cq, g.N_qk)

    @property
    def lumped_diagonal(self) -> np.ndarray:
        """The HRZ-lumped mass matrix (ndof,)."""
        if self._lumped_diagonal is None:
            self._lumped_diagonal = sum_to_unknowns([self.dofs.cell_dofs[b.name] for b in self.mesh.blocks],
                                                    [self.hrz_masses(b.name) for b in self.mesh.blocks],
                                                    self.dofs.ndof)
        return self._lumped_diagonal

    # -- right-hand side -----------------------------------------------------
    def _rhs_operator(self, name, points):
        key = (name, points.tobytes())
        op = self._rhs_cache.get(key)
        if op is None:
            et = self.mesh.block(name).element
            rule = rhs_rule(et, len(points))
            same = rule.npoints == len(points) and np.allclose(rule.points, points, atol=1e-13)
            if same:
                E, geo_pts = None, rule
            else:
                E, geo_pts = local_field_matrix(et, points, rule.points), rule
            g = self.mesh.geometry(name, geo_pts)
            op = (E, g.N_qk, g.dV_cq)
            self._rhs_cache[key] = op
        return op

    def rhs(self, field: GaussField) -> np.ndarray:
        """``b = Σ_e ∫ N^T G dΩ`` for every component (ndof, components);
        with ``lumped`` the HRZ nodal quadrature ``Σ_e m_a^e G_e(x_a)``."""
        self._check_field(field)
        b = np.zeros((self.dofs.ndof, field.ncomponents))
        if self.lumped:
            for name, V in field.values.items():
                et = self.mesh.block(name).element
                E = local_field_matrix(et, field.points[name], et.nodes)     # (k, q)
                ve = per_cell(E, V) * self.hrz_masses(name)[:, :, None]      # (c, k, a)
                b += self._scatter[name] @ ve.reshape(-1, field.ncomponents)
            return b
        for name, V in field.values.items():
            E, N, dV = self._rhs_operator(name, field.points[name])
            G = V if E is None else per_cell(E, V)                    # (c, r, a)
            be = per_cell(N.T, G, dV)                                 # (c, k, a)
            b += self._scatter[name] @ be.reshape(-1, field.ncomponents)
        return b

    def _check_field(self, field):
        if not isinstance(field, GaussField):
            raise InputError("expected a GaussField")
        if field.mesh is not self.mesh:
            raise InputError("the field belongs to another mesh than this projector was built for")

    # -- solve -----------------------------------------------------------------
    def project(self, field: GaussField) -> NodalField:
        """Project ``field`` (all components at once) to a :class:`NodalField`."""
        t0 = time.perf_counter()
        b = self.rhs(field)
        self._check_rhs(b, field)
        x, info = self._solve(b)
        info["time"] = time.perf_counter() - t0
        info["setup_time"] = self.setup_time
        return NodalField(self.mesh, x, field.components, self.dofs.node, self.dofs.region,
                          method=info["method"], info=info)

    def _check_rhs(self, b, field):
        if not np.isfinite(b).all():
            a = int(np.flatnonzero(~np.isfinite(b).all(axis=0))[0])
            raise InputError(f"the right-hand side of component {field.components[a]} overflows: values of "
                             f"about {np.abs(next(iter(field.values.values()))).max():.3g} times cell sizes "
                             "exceed the floating-point range; rescale the values (units)")

    def _solve(self, b):
        """Solve ``C x = b`` for every column of ``b`` at once (``b`` is
        consumed); returns ``x`` in node-row order and the solver details."""
        info = {"method": "lumped" if self.lumped else "l2", "ndof": self.dofs.ndof,
                "renumbered": self.renumbered, "across_regions": self.dofs.across_regions}
        if self.lumped:
            x = b / self.lumped_diagonal[:, None]
        elif self.solver == "direct":
            x = self._factor.solve(b)
            info["solver"] = "direct"
        else:
            if self._parts is None:
                self._parts = CGLayout(self.matrix, self._precond, self.threads)
            if self.preconditioner == "element":
                x0 = self._precond @ b                        # one preconditioner step: a close start
            else:
                x0 = b / self.lumped_diagonal[:, None]        # the HRZ-lumped projection
            x, it, res = block_cg(self.matrix, b, self._precond, x0, self.rtol, self.maxiter,
                                  layout=self._parts, overwrite_x0=True, overwrite_b=True)
            info.update(solver="cg", preconditioner=self.preconditioner, iterations=it.tolist(),
                        relative_residual=res.tolist(), rtol=self.rtol, threads=len(self._parts.threads))
        if self._new_of_old is not None:
            x = x[self._new_of_old]
        return x, info

    __call__ = project

    def project_cases(self, cases: LoadCases, budget: int = 2**27) -> dict[str, NodalField]:
        """Project every load case of ``cases`` with this one projector: the
        cases' components are the columns of one block CG solve, so each
        sparse product reads the matrix once for all of them (projection is
        linear, so the results combine as the cases do:
        ``P(Σ w_i σ_i) = Σ w_i P(σ_i)``, see
        :func:`~toolkit.core.cases.combine_nodal`).

        ``budget``: numbers (8 bytes each) the solve may hold at once; the
        cases go in chunks of :func:`~toolkit.core.arrays.chunk_slices` with
        about eight (unknowns x components) arrays per case (right-hand side,
        solution and the CG work arrays), so memory stays bounded however
        many cases there are.  Default 2**27 (1 GiB).

        Returns ``{case name: NodalField}`` in the cases' order; each field's
        ``info`` carries its own columns' iterations and residuals, the chunk
        it was solved in (``cases_in_solve``) and its share of the time."""
        if not isinstance(cases, LoadCases):
            raise InputError(f"project_cases expects LoadCases, got {type(cases).__name__}")
        if cases.mesh is not self.mesh:
            raise InputError("the load cases belong to another mesh than this projector was built for")
        if int(budget) < 1:
            raise InputError(f"budget must be a positive number of values, got {budget}")
        names, a = cases.names, cases.ncomponents
        out = {}
        for sl in chunk_slices(len(names), 8 * self.dofs.ndof * a, int(budget)):
            t0 = time.perf_counter()
            chunk = names[sl]
            b = np.empty((self.dofs.ndof, len(chunk) * a))
            for i, k in enumerate(chunk):
                bk = self.rhs(cases[k])
                self._check_rhs(bk, cases[k])
                b[:, i * a:(i + 1) * a] = bk
            x, info = self._solve(b)
            share = (time.perf_counter() - t0) / len(chunk)
            for i, k in enumerate(chunk):
                ci = dict(info, time=share, setup_time=self.setup_time, cases_in_solve=len(chunk))
                for key in ("iterations", "relative_residual"):
                    if key in ci:
                        ci[key] = ci[key][i * a:(i + 1) * a]
                out[k] = NodalField(self.mesh, x[:, i * a:(i + 1) * a], cases.components, self.dofs.node,
                                    self.dofs.region, method=info["method"], info=ci)
        return out

    def __repr__(self):
        kind = "lumped (HRZ)" if self.lumped else f"consistent, {self.solver}"
        return (f"L2Projector({self.dofs.ndof} unknowns, {kind}, "
                f"{'renumbered' if self.renumbered else 'original numbering'})")


def project_l2(field: GaussField, lumped=False, across_regions=False, solver="cg", rtol=1e-10,
               maxiter=None, renumber="auto", threads=None, preconditioner="auto") -> NodalField:
    """Global L2 projection of ``field`` to the nodes (Hinton & Campbell 1974).

    Builds an :class:`L2Projector` and projects once; keep a projector to
    project several fields on one mesh.  See :class:`L2Projector` for the
    options.

    Examples
    --------
    A stress varying linearly across two cells is recovered exactly at the
    nodes (the raw values at the Gauss points jump between the cells):

    >>> from toolkit import GaussField, Mesh, project_l2
    >>> mesh = Mesh([[0, 0], [2, 0], [2, 1], [0, 1], [4, 0], [4, 1]],
    ...             {"quad4": [[0, 1, 2, 3], [1, 4, 5, 2]]})
    >>> x = mesh.geometry("quad4", "full").x_cqi[..., 0]      # (cells, points)
    >>> nodal = project_l2(GaussField(mesh, {"quad4": (100 + 10 * x)[..., None]}, ("sxx",)))
    >>> nodal.values[:, 0].round(9).tolist()
    [100.0, 120.0, 120.0, 100.0, 140.0, 140.0]
    >>> nodal.info["method"], nodal.info["solver"]
    ('l2', 'cg')
    """
    proj = L2Projector(field.mesh, lumped=lumped, across_regions=across_regions, solver=solver,
                       rtol=rtol, maxiter=maxiter, renumber=renumber, threads=threads,
                       preconditioner=preconditioner)
    return proj.project(field)

