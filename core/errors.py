"""Errors raised by the model layer.

Every error names the element (disc, link, excitation ...) and the field that is
wrong, so that the command line and the desktop program can show one clear line
without a traceback.
"""
from __future__ import annotations


class ModelError(ValueError):
    """Bad input in a project: names the element and the field concerned."""

    def __init__(self, message: str, element: str | None = None, field: str | None = None):
        super().__init__(message)
        self.message = message
        self.element = element
        self.field = field

    def where(self) -> str:
        parts = []
        if self.element:
            parts.append(self.element)
        if self.field:
            parts.append(f"field '{self.field}'")
        return ", ".join(parts)

    def __str__(self) -> str:  # one readable line
        where = self.where()
        return f"{where}: {self.message}" if where else self.message
