"""Layer 6: parameterised notebooks.  The parameters-cell grammar
(``parameters``), notebook files and injection (``notebook``), the run's
title fields (``title``), execution in a fresh kernel with ``<name>.summary.json``
(``execute``), the offline HTML report with the verdict filled in (``html``),
its PDF (``pdf``), ``new`` and ``demo`` (``create``), parameter studies over
many sets (``study``, their table and plots in ``study_table``); the summary record, the
title block and the verdict themselves live in :mod:`toolkit.report`."""
from toolkit.errors import ParameterError, WorkbookError, WorkbookExecutionError
from toolkit.report.summary import SUMMARY_METADATA_KEY, Summary, input_path, inputs_hash, inputs_record, read_summary
from toolkit.workbook.create import demo, new_workbook
from toolkit.workbook.execute import RenderResult, render, workbook_dir
from toolkit.workbook.notebook import (INJECTED_TAG, PARAMETERS_TAG, WORKBOOKS_DIR, known_workbooks,
                                       workbook_parameters)
from toolkit.workbook.parameters import Parameter, parse_assignment, parse_parameters
from toolkit.workbook.study import StudyResult, Variant, cluster_executor, grid, render_many

__all__ = ["Summary", "inputs_hash", "inputs_record", "input_path", "workbook_dir", "render", "RenderResult", "new_workbook", "demo",
           "parse_parameters", "parse_assignment", "workbook_parameters", "Parameter",
           "ParameterError", "WorkbookError", "WorkbookExecutionError", "read_summary", "known_workbooks",
           "WORKBOOKS_DIR", "SUMMARY_METADATA_KEY", "PARAMETERS_TAG", "INJECTED_TAG",
           "render_many", "grid", "cluster_executor", "StudyResult", "Variant"]
