"""Layer 3: results in and out.  The neutral result folder (CSV files with a
documented schema, point matching by coordinates), the same content as one
``.npz`` file, nodal CSV and VTU export.  Imports only :mod:`toolkit.core`."""
from toolkit.io.neutral import (FORMAT, POINT_TOL, VTK_CELL_TYPES, read_about, read_mesh, read_results,
                                write_nodal_csv, write_results, write_vtu)

__all__ = ["FORMAT", "POINT_TOL", "VTK_CELL_TYPES", "read_results", "write_results", "read_mesh", "read_about",
           "write_nodal_csv", "write_vtu"]
