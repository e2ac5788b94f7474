"""The recovery test's settings box: share to hide, repeats, k range, hiding style and seed.

The box only describes a test (:meth:`RecoverySettings.request`); running it and
showing the result is :class:`~imputer_app.gui.recovery_panel.RecoveryPanel`'s job.
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QComboBox,
    QDoubleSpinBox,
    QGroupBox,
    QHBoxLayout,
    QSpinBox,
    QVBoxLayout,
    QWidget,
)

from imputer_app.gui.recovery_logic import MASKINGS, RecoveryRequest
from imputer_app.gui.widgets import Reflow, buddy, compact, named
from imputer_app.plan import DEFAULT_KS

SPIN_WIDTH = 90


class RecoverySettings(QGroupBox):
    """The fields of a recovery test; they reflow onto more rows when the box is narrow."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("Recovery test settings", parent)
        named(
            self,
            "recoverySettings",
            "Recovery test settings",
            "Hide known cells, fill them for every k and measure the error",
        )
        self.hide_fraction = named(
            QDoubleSpinBox(self),
            "recoveryHideFraction",
            "Share of known cells to hide",
            "Share of each fill column's known cells hidden in each repeat (0.10 hides 10%)",
        )
        self.hide_fraction.setRange(0.01, 0.5)
        self.hide_fraction.setSingleStep(0.01)
        self.hide_fraction.setDecimals(2)
        self.hide_fraction.setValue(0.1)
        self.hide_fraction.setMaximumWidth(SPIN_WIDTH)
        self.repeats = self._spin(
            "recoveryRepeats",
            "Repeats",
            "How many times the known cells are split afresh into folds (each fold hidden "
            "once); more repeats give a steadier curve, not a smaller standard error",
            1,
            50,
        )
        self.repeats.setValue(5)
        self.k_from = self._spin("recoveryKFrom", "Smallest k", "Smallest number of donors to try", 1, 1)
        self.k_to = self._spin(
            "recoveryKTo",
            "Largest k",
            "Largest number of donors to try (at most 100, and no more than the donors available)",
            1,
            1,
        )
        self.k_from.valueChanged.connect(lambda v: self.k_to.setValue(max(v, self.k_to.value())))
        self.k_to.valueChanged.connect(lambda v: self.k_from.setValue(min(v, self.k_from.value())))
        k_range = QWidget(self)
        k_row = QHBoxLayout(k_range)
        k_row.setContentsMargins(0, 0, 0, 0)
        k_row.addWidget(self.k_from)
        k_row.addWidget(buddy("to", self.k_to, k_range))
        k_row.addWidget(self.k_to)
        k_row.addStretch(1)
        self.masking = compact(
            named(QComboBox(self), "recoveryMasking", "Hiding style", "How the cells to hide are chosen"), 12
        )
        for i, (value, label, tip) in enumerate(MASKINGS):
            self.masking.addItem(label, value)
            self.masking.setItemData(i, tip, Qt.ItemDataRole.ToolTipRole)
        self.seed = self._spin(
            "recoverySeed",
            "Random seed",
            "Seed of the hiding: the same seed and settings give the same result",
            0,
            2_147_483_647,
        )
        # Every Alt+letter of the window has one owner (menus, tabs, buttons, the setup's
        # labels); fields left without one are reached with Tab.
        pairs = [
            (buddy("Hide share:", self.hide_fraction, self), self.hide_fraction),
            (buddy("Re&peats:", self.repeats, self), self.repeats),
            (buddy("k fro&m:", self.k_from, self), k_range),
            (buddy("Hiding st&yle:", self.masking, self), self.masking),
            (buddy("Seed:", self.seed, self), self.seed),
        ]
        self.flow = Reflow(pairs, self)
        QVBoxLayout(self).addWidget(self.flow)

    def _spin(self, name: str, accessible: str, tip: str, low: int, high: int) -> QSpinBox:
        spin = named(QSpinBox(self), name, accessible, tip)
        spin.setRange(low, high)
        spin.setMaximumWidth(SPIN_WIDTH)
        return spin

    def fields(self) -> list[QWidget]:
        """The fields in keyboard (Tab) order."""
        return [self.hide_fraction, self.repeats, self.k_from, self.k_to, self.masking, self.seed]

    def set_ceiling(self, ceiling: int) -> None:
        """Allow k up to ``ceiling``; a range still at 1 opens to the default range (or the ceiling).

        The default range is the command line's (``plan.DEFAULT_KS``).
        """
        for spin in (self.k_from, self.k_to):
            spin.setMaximum(ceiling)
        if self.k_to.value() <= 1 < ceiling:
            self.k_to.setValue(min(max(DEFAULT_KS), ceiling))

    def request(self) -> RecoveryRequest:
        """The test the fields describe."""
        return RecoveryRequest(
            hide_fraction=round(self.hide_fraction.value(), 4),
            repeats=self.repeats.value(),
            k_from=self.k_from.value(),
            k_to=self.k_to.value(),
            masking=str(self.masking.currentData()),
            seed=self.seed.value(),
        )
