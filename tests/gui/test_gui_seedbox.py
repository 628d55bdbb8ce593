"""The seed field: whole numbers up to 2**63 - 1, the spin box's interface."""

from __future__ import annotations

import pytest
from PySide6.QtCore import Qt

from clusterdesk.gui.seedbox import MAX_SEED, SeedBox
from clusterdesk.screen import column_seed

pytestmark = pytest.mark.gui


def test_values_in_and_out(qtbot):
    box = SeedBox()
    qtbot.addWidget(box)
    assert box.value() == 0 and box.maximum() == MAX_SEED == 2**63 - 1
    seed = column_seed(0, "ab" * 32, None, 3, "length_mm")  # a screened column's seed
    box.setValue(seed)
    assert box.value() == seed and box.text() == str(seed)
    box.setValue(-5)
    assert box.value() == 0
    box.setValue(2**70)
    assert box.value() == MAX_SEED
    box.clear()
    assert box.value() == 0


def test_typing_takes_digits_only(qtbot):
    box = SeedBox()
    qtbot.addWidget(box)
    box.clear()
    qtbot.keyClicks(box, "12a-3.4")
    assert box.text() == "1234" and box.value() == 1234
    qtbot.keyClick(box, Qt.Key.Key_Backspace)
    assert box.value() == 123
