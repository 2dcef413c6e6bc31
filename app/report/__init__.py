"""The PDF review sheet: ``write_review_sheet`` (desktop program's File menu) and
``write_sheet`` (``twistwise report``, :mod:`app.commands.report`)."""
from __future__ import annotations

from .sheet import write_review_sheet, write_sheet

__all__ = ["write_review_sheet", "write_sheet"]
