"""Package data: S-N curve data with its sources and the demo result folders (shipped as toolkit.data)."""
