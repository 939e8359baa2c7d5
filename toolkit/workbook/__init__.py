"""Layer 6: parameterised notebooks.  The parameters-cell grammar
(``parameters``), notebook files and injection (``notebook``), execution in a
fresh kernel with ``<name>.summary.json`` (``execute``), the offline HTML report
(``html``), ``new`` and ``demo`` (``create``); the summary record itself
lives in :mod:`toolkit.report.summary`."""
from toolkit.errors import ParameterError, WorkbookError, WorkbookExecutionError
from toolkit.report.summary import SUMMARY_METADATA_KEY, Summary, inputs_hash, read_summary
from toolkit.workbook.create import demo, new_workbook
from toolkit.workbook.execute import RenderResult, render, workbook_dir
from toolkit.workbook.notebook import (INJECTED_TAG, PARAMETERS_TAG, WORKBOOKS_DIR, known_workbooks,
                                       workbook_parameters)
from toolkit.workbook.parameters import Parameter, parse_assignment, parse_parameters

__all__ = ["Summary", "inputs_hash", "workbook_dir", "render", "RenderResult", "new_workbook", "demo",
           "parse_parameters", "parse_assignment", "workbook_parameters", "Parameter",
           "ParameterError", "WorkbookError", "WorkbookExecutionError", "read_summary", "known_workbooks",
           "WORKBOOKS_DIR", "SUMMARY_METADATA_KEY", "PARAMETERS_TAG", "INJECTED_TAG"]
