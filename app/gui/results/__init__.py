"""Result views of the desktop program (natural frequencies, mode shapes,
interference diagram, forced response); the main window places ResultsPanel."""
from .panel import ResultsPanel

__all__ = ["ResultsPanel"]
