"""Layer 5: what a reader sees.  One number formatter and one JSON converter,
tables, the summary record, all matplotlib drawing (objects' ``.plot()``
methods delegate here), the path widget and the steps the workbooks share."""
from toolkit.report.format import first_non_finite, fmt, json_text, plain
from toolkit.report.summary import SUMMARY_METADATA_KEY, Summary, inputs_hash, read_summary
from toolkit.report.tables import HEADLESS_ENV, Table, footer, headless, inputs_table

__all__ = ["Table", "fmt", "plain", "first_non_finite", "json_text", "inputs_table", "footer", "headless",
           "HEADLESS_ENV", "Summary", "inputs_hash", "read_summary", "SUMMARY_METADATA_KEY"]
