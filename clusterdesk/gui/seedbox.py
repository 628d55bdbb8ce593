"""A field for a random seed: any whole number from 0 to 2**63 - 1.

A QSpinBox holds only 32-bit numbers, but the seeds a screening run gives
its columns (:func:`clusterdesk.screen.column_seed`) go up to 2**63 - 1, and
an analysis opened from a screening row, saved and reopened must show the
seed it was fitted with. The field keeps the spin box's ``value()`` /
``setValue()`` interface.
"""

from __future__ import annotations

from PySide6.QtCore import QRegularExpression
from PySide6.QtGui import QRegularExpressionValidator
from PySide6.QtWidgets import QLineEdit

__all__ = ["SeedBox", "MAX_SEED"]

#: The largest seed the field takes (numpy's SeedSequence takes any whole number >= 0).
MAX_SEED = 2**63 - 1


class SeedBox(QLineEdit):
    """A line for a whole number 0 .. :data:`MAX_SEED` (empty reads as 0)."""

    def __init__(self, parent=None):
        super().__init__("0", parent)
        self.setValidator(QRegularExpressionValidator(QRegularExpression(r"[0-9]{1,19}"), self))

    def value(self) -> int:
        """The seed typed (0 when empty; larger numbers are read as :data:`MAX_SEED`)."""
        text = self.text().strip()
        return min(int(text), MAX_SEED) if text else 0

    def setValue(self, value: int) -> None:  # noqa: N802 (the spin box's name)
        """Show ``value`` (kept within 0 .. MAX_SEED)."""
        self.setText(str(min(max(int(value), 0), MAX_SEED)))

    def maximum(self) -> int:
        """The largest seed the field takes."""
        return MAX_SEED
