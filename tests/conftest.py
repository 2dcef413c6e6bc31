"""Fixtures shared by the test modules."""
from __future__ import annotations

import pytest


@pytest.fixture
def results_panel(qtbot):
    """Make a shown :class:`app.gui.results.ResultsPanel` of a given size (``results_panel(w, h)``);
    at the end its workers (transient runs, response refinement) are cancelled and waited for."""
    from app.gui.results import ResultsPanel
    made = []

    def make(width: int, height: int):
        p = ResultsPanel()
        qtbot.addWidget(p)
        p.resize(width, height)
        p.show()
        made.append(p)
        return p

    yield make
    for p in made:
        p.shutdown(20000)
