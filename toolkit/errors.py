"""The toolkit's own exceptions: what the command line reports as the user's
mistake (one line, exit code 2) or as a failed workbook (exit code 1).

Everything else that escapes is a bug in the toolkit and is shown with its
traceback.  :class:`StresspathError` derives from :class:`ValueError`, so code
that caught ``ValueError`` for bad input keeps working.

Importable from every layer; imports nothing from the toolkit.
"""
from __future__ import annotations

__all__ = ["StresspathError", "InputError", "WorkbookError", "ParameterError", "WorkbookExecutionError"]


class StresspathError(ValueError):
    """Base of the errors that are the user's to fix; the message says what
    (file, row, block, cell, element or parameter) and what is wrong."""


class InputError(StresspathError):
    """Bad input data or arguments: a result file, a mesh, a field, a path,
    a load or a check input."""


class WorkbookError(StresspathError):
    """A workbook cannot be rendered as it stands (file, cells, summary)."""


class ParameterError(WorkbookError):
    """A parameter value (or the parameters cell itself) is wrong."""


class WorkbookExecutionError(WorkbookError):
    """A cell failed while executing; ``notebook`` is the executed notebook
    written (with the traceback).  The command line exits with code 1, or 2
    when ``bad_input`` is set: the cell stopped on one of the toolkit's own
    input errors (:class:`InputError`, :class:`ParameterError`), e.g. a
    workbook checking a parameter against the data it reads."""

    def __init__(self, message, notebook=None, bad_input=False):
        super().__init__(message)
        self.notebook = notebook
        self.bad_input = bool(bad_input)
