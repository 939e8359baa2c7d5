"""Layer 3: results in and out.  The neutral result folder (CSV files with a
documented schema, point matching by coordinates), the same content as one
``.npz`` file, nodal CSV and VTU export.  Imports only :mod:`toolkit.core`.

Modules: ``files`` (text read, atomic write), ``table`` (one CSV table, read
and written), ``about`` (the about record), ``points`` (integration points
matched by position), ``npz`` (the ``.npz`` form), ``neutral`` (the result
folder), ``export`` (nodal CSV and VTU), ``history`` (a load history: load
factors of named load cases over time)."""
from toolkit.io.about import FORMAT
from toolkit.io.export import VTK_CELL_TYPES, write_nodal_csv, write_vtu
from toolkit.io.history import LoadHistory, read_load_history
from toolkit.io.neutral import read_about, read_cases, read_mesh, read_results, write_results
from toolkit.io.points import POINT_TOL

__all__ = ["FORMAT", "POINT_TOL", "VTK_CELL_TYPES", "read_results", "read_cases", "write_results", "read_mesh",
           "read_about", "write_nodal_csv", "write_vtu", "LoadHistory", "read_load_history"]
