"""Every side panel is usable by keyboard and screen reader, and follows the system palette.

(Common practice, no source: every control named for assistive technology, a tooltip,
a sensible tab order, and no hard-coded colours that break a dark palette.)
"""

from __future__ import annotations

import pytest
from PySide6.QtWidgets import (
    QAbstractButton,
    QAbstractItemView,
    QAbstractSpinBox,
    QComboBox,
    QHeaderView,
    QProgressBar,
    QWidget,
)

from imputer_app.gui.donor_panel import DonorPanel
from imputer_app.gui.recovery_panel import RecoveryPanel
from imputer_app.gui.unfilled_panel import UnfilledPanel

CONTROLS = (QAbstractButton, QAbstractSpinBox, QComboBox, QAbstractItemView, QProgressBar)

PANELS = [
    (
        RecoveryPanel,
        "recoveryPanel",
        [
            "recoveryHideFraction",
            "recoveryRepeats",
            "recoveryKFrom",
            "recoveryKTo",
            "recoveryMasking",
            "recoverySeed",
            "recoveryRun",
            "recoveryCancel",
            "recoveryViews",
            "recoveryChartColumns",
            "recoveryEnlargeChart",
            "recoverySaveChart",
            "recoveryTable",
            "recoveryColumnTableSortBy",
            "recoveryColumnTable",
            "recoveryUseEachK",
            "recoveryOneK",
            "recoverySuggestWeights",
            "recoveryWeightsCancel",
            "recoveryWeightsTableSortBy",
            "recoveryWeightsTable",
            "recoveryApplyWeights",
            "recoveryUseBest",
            "recoveryUseOneSe",
            "recoveryUseSelected",
        ],
    ),
    (DonorPanel, "donorPanel", ["donorTable"]),
    (UnfilledPanel, "unfilledPanel", ["unfilledReasonFilter", "unfilledTable"]),
]


@pytest.fixture(params=PANELS, ids=[name for _, name, _ in PANELS])
def built(request, qtbot):
    cls, name, order = request.param
    panel = cls()
    qtbot.addWidget(panel)
    yield panel, name, order
    runner = getattr(panel, "runner", None)
    if runner is not None:
        assert runner.wait(5000)


def inner_part(widget: QWidget) -> bool:
    """Qt's own parts of a control (headers, a combo box's pop-up list, a spin box's editor)."""
    if isinstance(widget, QHeaderView) or widget.objectName().startswith("qt_"):
        return True
    parent = widget.parentWidget()
    while parent is not None:
        if isinstance(parent, QComboBox | QAbstractSpinBox):
            return True
        parent = parent.parentWidget()
    return False


def controls(panel: QWidget) -> list[QWidget]:
    return [w for w in panel.findChildren(QWidget) if isinstance(w, CONTROLS) and not inner_part(w)]


def test_every_control_has_names_and_a_tooltip(built):
    panel, name, _ = built
    assert panel.objectName() == name
    assert panel.accessibleName()
    found = controls(panel)
    assert found
    for widget in found:
        assert widget.objectName(), widget
        assert widget.accessibleName(), widget.objectName()
        assert widget.toolTip(), widget.objectName()


def test_tab_order_follows_the_layout(built):
    panel, _, order = built
    first = panel.findChild(QWidget, order[0])
    seen: list[str] = []
    widget = first
    for _ in range(200):
        if widget.objectName() in order and widget.objectName() not in seen:
            seen.append(widget.objectName())
        widget = widget.nextInFocusChain()
        if widget is first:
            break
    assert seen == order


def test_no_hard_coded_colours(built):
    panel, _, _ = built
    for widget in [panel, *panel.findChildren(QWidget)]:
        assert widget.styleSheet() == "", widget.objectName()
        assert not widget.autoFillBackground() or widget.palette() == panel.palette(), widget.objectName()
