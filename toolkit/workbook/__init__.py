"""Layer 6: parameterised notebooks.  The parameters-cell grammar, injection,
execution in a fresh kernel, the offline HTML report and ``summary.json``,
``new`` and ``demo``."""
from toolkit.workbook.runner import (INJECTED_TAG, PARAMETERS_TAG, SUMMARY_METADATA_KEY, WORKBOOKS_DIR, Parameter,
                                     ParameterError, RenderResult, Summary, WorkbookError, WorkbookExecutionError,
                                     add_commands, demo, inputs_hash, known_workbooks, new_workbook,
                                     parse_assignment, parse_parameters, read_summary, render, workbook_dir,
                                     workbook_parameters)

__all__ = ["Summary", "inputs_hash", "workbook_dir", "render", "RenderResult", "new_workbook", "demo",
           "add_commands", "parse_parameters", "parse_assignment", "workbook_parameters", "Parameter",
           "ParameterError", "WorkbookError", "WorkbookExecutionError", "read_summary", "known_workbooks",
           "WORKBOOKS_DIR", "SUMMARY_METADATA_KEY", "PARAMETERS_TAG", "INJECTED_TAG"]
