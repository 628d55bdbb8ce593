"""Table models: the ranking shows the scan as ranked, sorting uses full values, copying keeps digits."""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import Qt

import clusterdesk
from clusterdesk.engine.criteria import evidence_wording
from clusterdesk.gui.models import RankingModel, SortProxy, as_tab_separated, fmt, model_words


@pytest.fixture(scope="module")
def scan():
    rng = np.random.default_rng(11)
    x = np.concatenate([rng.normal(0, 1, 300), rng.normal(5, 1.5, 200)])
    return clusterdesk.scan(x, kmax=3, widths="both", restarts=2)


def test_ranking_rows_follow_the_scan(qtbot, scan):
    model = RankingModel()
    best = scan.ranking[0]
    model.set_scan(scan, (best.k, best.widths))
    assert model.rowCount() == len(scan.ranking)
    for row, r in enumerate(scan.ranking):
        assert model.key(row) == (r.k, r.widths)
        assert model.raw(row, 3) == r.bic and model.raw(row, 4) == r.delta_bic and model.raw(row, 6) == r.icl
        # Kass & Raftery (1995) bands through the engine's wording
        assert model.raw(row, 5) == ("" if row == 0 else evidence_wording(r.delta_bic))
    assert model.raw(0, 0) == "best, chosen"
    model.set_chosen((scan.ranking[-1].k, scan.ranking[-1].widths))
    assert model.raw(0, 0) == "best" and model.raw(len(scan.ranking) - 1, 0) == "chosen"
    assert model.data(model.index(0, 3)) == f"{scan.ranking[0].bic:.2f}"


def test_sorting_uses_the_unrounded_values(qtbot, scan):
    model = RankingModel()
    model.set_scan(scan)
    proxy = SortProxy()
    proxy.setSourceModel(model)
    proxy.sort(6, Qt.SortOrder.AscendingOrder)  # ICL
    icl = [proxy.index(r, 6).data(Qt.ItemDataRole.UserRole + 1) for r in range(proxy.rowCount())]
    assert icl == sorted(r.icl for r in scan.ranking)


def test_tab_separated_copy_round_trips_floats(qtbot, scan):
    model = RankingModel()
    model.set_scan(scan)
    lines = as_tab_separated(model).splitlines()
    assert len(lines) == 1 + len(scan.ranking)
    for line, r in zip(lines[1:], scan.ranking):
        cells = line.split("\t")
        assert float(cells[3]) == r.bic  # shortest round-trip text
        assert cells[7] == ("true" if r.converged else "false")


def test_words_and_number_formats():
    assert model_words(1, "shared") == "1 component, shared width"
    assert model_words(3, "separate") == "3 components, separate widths"
    assert fmt(float("nan")) == "" and fmt(True) == "yes" and fmt(0.123456789, "weight") == "0.123"
