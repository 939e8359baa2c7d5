"""Layer 5: what a reader sees.  One number formatter and one JSON converter,
tables, the summary record, all matplotlib drawing (objects' ``.plot()``
methods delegate here), the path widget and the steps the workbooks share."""
from toolkit.report.tables import HEADLESS_ENV, Table, fmt, footer, headless, inputs_table

__all__ = ["Table", "fmt", "inputs_table", "footer", "headless", "HEADLESS_ENV"]
