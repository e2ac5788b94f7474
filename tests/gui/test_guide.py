"""Help > Guide: a short guide inside the app."""

from __future__ import annotations

from imputer_app.gui.guide import FIVE_STEPS, GuideDialog, guide_html
from imputer_app.gui.markers import MARKERS, WEAK_SYMBOL
from tests.gui.conftest import new_window


def test_the_guide_covers_steps_recovery_test_symbols_support_and_export():
    text = guide_html()
    assert text.count("<li>") >= len(FIVE_STEPS) == 5
    for marker in MARKERS.values():
        assert f"<b>{marker.symbol}</b>" in text
    for words in (
        "NRMSE",
        "standard deviation",
        "column-average",
        WEAK_SYMBOL,
        "weak support",
        "spread of its donors",
        "Fill log",
        "About this fill",
        ".fill-log.csv",
    ):
        assert words in text, words


def test_help_menu_opens_the_guide_with_f1(qtbot, monkeypatch):
    shown = []
    monkeypatch.setattr(GuideDialog, "exec", lambda self: shown.append(self.text.toPlainText()) or 0)
    w = new_window(qtbot)
    action = w.actions_["guide"]
    assert action.shortcut().toString() == "F1"
    assert action in w.findChild(type(w.menuBar().actions()[0].menu()), "menuHelp").actions()
    action.trigger()
    assert shown and "Five steps" in shown[0]
