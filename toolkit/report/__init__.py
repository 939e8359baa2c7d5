"""Layer 5: what a reader sees.  One number formatter and one JSON converter,
tables, the summary record, the title block and the verdict, all matplotlib
drawing (objects' ``.plot()`` methods delegate here), the path widget and the
steps the workbooks share."""
from toolkit.report.format import first_non_finite, fmt, fmt_unit, json_text, plain, unit_text
from toolkit.report.summary import SUMMARY_METADATA_KEY, Summary, inputs_hash, read_summary
from toolkit.report.tables import HEADLESS_ENV, Table, footer, headless, inputs_table
from toolkit.report.title import title_block
from toolkit.report.verdict import Verdict, verdict_placeholder

__all__ = ["Table", "fmt", "fmt_unit", "unit_text", "plain", "first_non_finite", "json_text", "inputs_table", "footer",
           "headless", "title_block", "Verdict", "verdict_placeholder", "HEADLESS_ENV", "Summary", "inputs_hash", "read_summary", "SUMMARY_METADATA_KEY"]
