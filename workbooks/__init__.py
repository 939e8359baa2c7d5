"""Package data: the report notebooks and their sources (shipped as toolkit.workbooks)."""
