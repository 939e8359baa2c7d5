"""Layer 1, the foundation: element types and Gauss rules, the mesh, fields on
it and their node/region numbering, load cases on one mesh, point location, stress invariants and
rotations, sparse assembly and block conjugate gradients, structured meshes, checks of
scalar inputs (numbers.py).

Imports nothing from the toolkit but :mod:`toolkit.errors`."""
