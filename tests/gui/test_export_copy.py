"""The app says what the .xlsx copy of an .ods workbook could not keep, in its status line.

The .ods file is made by LibreOffice from an xlsxwriter workbook, never by Kinfill
(:mod:`tests.sheets.office_fixture`).
"""

from __future__ import annotations

from pathlib import Path

import openpyxl

from imputer_app.sheets import export_limits
from tests.gui.conftest import new_window
from tests.sheets import office_fixture as office

pytestmark = office.needs_soffice


def test_exporting_an_ods_sheet_says_what_the_copy_keeps(qtbot, boxes, tmp_path: Path) -> None:
    source = office.convert(office.build_source(tmp_path / "lab.xlsx"), "ods", tmp_path)
    window = new_window(qtbot)
    with qtbot.waitSignal(window.sheet_loaded, timeout=60_000):
        window.open_path(source)  # a double-click's best guess: the first sheet, no dialog
    assert window.session.sheet is not None and window.session.sheet.source.sheet == "Results"
    with qtbot.waitSignal(window.preview_ready, timeout=60_000):
        window.actions_["preview"].trigger()
    window.actions_["apply"].trigger()
    target = tmp_path / "lab.filled.xlsx"
    with qtbot.waitSignal(window.exported, timeout=60_000) as done:
        assert window.export(target)
    assert done.args == [[target]]
    limits = export_limits(window.session.sheet, target)
    assert limits.startswith("from the .ods input: an .xlsx copy")
    assert window.statusBar().currentMessage() == f"Exported {target.name} to {tmp_path}. Note: {limits}."
    assert openpyxl.load_workbook(target, read_only=True).sheetnames[:2] == ["Results", "Methods"]
    assert boxes.warnings == []
    window.close()
