"""Element matrices of small-strain elasticity, vectorised over the cells
and integration points of one mesh block: the strain-displacement matrix
``B``, the element stiffness ``K_e = Σ_q B^T D B dV`` and the strains
``ε = B u_e`` and stresses ``σ = D ε`` at the integration points (with the
out-of-plane component of each analysis).  ``dV`` carries the thickness of
plane problems or the ring factor ``2 π r`` of axisymmetry."""
from __future__ import annotations

import numpy as np

from toolkit.core.arrays import chunk_slices

__all__ = ["element_stiffness", "stress_and_strain"]


def _b_matrix(dNdx, N, r, analysis):
    """B (c, q, nε, 2k) for dof order (node, component)."""
    c, q, k, _ = dNdx.shape
    ne = 4 if analysis == "axisymmetric" else 3
    B = np.zeros((c, q, ne, k, 2))
    B[:, :, 0, :, 0] = dNdx[..., 0]
    B[:, :, 1, :, 1] = dNdx[..., 1]
    B[:, :, 2, :, 0] = dNdx[..., 1]
    B[:, :, 2, :, 1] = dNdx[..., 0]
    if ne == 4:
        B[:, :, 3, :, 0] = N[None, :, :] / r[:, :, None]
    return B.reshape(c, q, ne, 2 * k)


def _block_setup(mesh, b, rule, analysis, thickness, materials):
    """Geometry of one block at ``rule``, the volume weights ``dV`` (c, q),
    the ``D`` matrices of its regions and each cell's index into them."""
    g = mesh.geometry(b.name, rule, gradients=True)
    x = g.x_cqi
    if analysis == "axisymmetric":
        dV = g.dV_cq * 2 * np.pi * x[..., 0]
    else:
        dV = g.dV_cq * thickness
    regs = np.unique(b.regions)
    Dtab = np.stack([materials[int(rg)].matrix(analysis) for rg in regs])
    Didx = np.searchsorted(regs, b.regions)
    return g, dV, Dtab, Didx


def element_stiffness(mesh, b, rule, analysis, thickness, materials):
    """Element stiffness matrices (c, 2k, 2k) ``Σ_q B^T D B dV`` of one block."""
    g, dV, Dtab, Didx = _block_setup(mesh, b, rule, analysis, thickness, materials)
    m, q, k, _ = g.dNdx_cqki.shape
    ne = Dtab.shape[1]
    Ke = np.empty((m, 2 * k, 2 * k))
    for sl in chunk_slices(m, q * ne * 2 * k * 3):
        B = _b_matrix(g.dNdx_cqki[sl], g.N_qk, g.x_cqi[sl, :, 0], analysis)      # (c, q, I, a)
        DB = np.matmul(Dtab[Didx[sl]][:, None], B)                                 # D_IJ B_Ja
        DB *= dV[sl, :, None, None]
        mc = B.shape[0]
        np.matmul(B.reshape(mc, q * ne, 2 * k).transpose(0, 2, 1), DB.reshape(mc, q * ne, 2 * k), out=Ke[sl])
    return Ke


def stress_and_strain(mesh, b, rule, analysis, thickness, materials, u):
    """Stresses and strains (c, q, 4) at the integration points of one block
    from the nodal displacements ``u`` (n, 2): ``ε = B u_e``, ``σ = D ε``,
    then ``szz``/``ezz`` of plane stress or plane strain (axisymmetry has
    four components already)."""
    g, dV, Dtab, Didx = _block_setup(mesh, b, rule, analysis, thickness, materials)
    m, q, k, _ = g.dNdx_cqki.shape
    ne = Dtab.shape[1]
    ue = u[b.cells].reshape(m, 2 * k)
    eps = np.empty((m, q, ne))
    for sl in chunk_slices(m, q * ne * 2 * k * 2):
        B = _b_matrix(g.dNdx_cqki[sl], g.N_qk, g.x_cqi[sl, :, 0], analysis)
        eps[sl] = np.einsum("cqIa,ca->cqI", B, ue[sl], optimize=True)
    sig = np.einsum("cIJ,cqJ->cqI", Dtab[Didx], eps, optimize=True)
    if analysis == "axisymmetric":
        return sig, eps
    regs = np.unique(b.regions)
    nu = np.array([materials[int(rg)].nu for rg in regs])[Didx][:, None]
    E = np.array([materials[int(rg)].E for rg in regs])[Didx][:, None]
    if analysis == "plane_strain":
        szz = nu * (sig[..., 0] + sig[..., 1])
        ezz = np.zeros_like(szz)
    else:
        szz = np.zeros_like(sig[..., 0])
        ezz = -nu / E * (sig[..., 0] + sig[..., 1])
    return np.concatenate([sig, szz[..., None]], -1), np.concatenate([eps, ezz[..., None]], -1)
