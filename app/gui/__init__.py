"""Desktop program (PySide6 + pyqtgraph)."""
