"""The Gaps view shows the gap check of the open sheet; the Pictures view selects a clicked point's cell."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import QPoint, Qt

from imputer_app.engine import impute
from imputer_app.gui.gaps_view import GapsView, mcar_line
from imputer_app.gui.pictures_view import PicturesView
from imputer_app.gui.state import Session
from imputer_app.plan import FillPlan
from imputer_app.sheets import read_sheet, scatter_partner
from imputer_app.validation import gap_check

DEMO = Path(__file__).resolve().parents[2] / "sample_sheets" / "river_survey.xlsx"


@pytest.fixture(scope="module")
def demo():
    return read_sheet(DEMO)


@pytest.fixture
def session(demo) -> Session:
    s = Session()
    s.load(demo, DEMO, plan=FillPlan())
    return s


def test_gaps_view_shows_the_demo_pattern(qtbot, session, demo):
    view = GapsView(session=session)
    qtbot.addWidget(view)
    with qtbot.waitSignal(view.check_ready, timeout=60_000) as ready:
        qtbot.mouseClick(view.run_button, Qt.MouseButton.LeftButton)
    check = ready.args[0]
    expected = gap_check(demo, FillPlan())
    assert check.mcar.p_value == pytest.approx(expected.mcar.p_value, rel=1e-12)
    # The demo sheet's Nitrate gaps come where Conductivity is high (sample_sheets/generate.py).
    assert check.mcar.p_value < 0.01
    assert view.mcar_label.text() == mcar_line(expected)
    assert f"p-value {expected.mcar.p_value:.3g}" in view.mcar_label.text()
    assert view.meaning_label.text().startswith(expected.mcar.meaning)
    assert view.headline_label.text() == expected.headline
    assert view.differences.rowCount() == len(expected.differences)
    first = [view.differences.item(0, j).text() for j in range(3)]
    assert first == ["Nitrate", "Conductivity", f"{expected.differences['difference'].iloc[0]:+.2f}"]
    assert view.patterns.rowCount() == len(expected.patterns)
    count_column = [
        view.patterns.horizontalHeaderItem(j).text() for j in range(view.patterns.columnCount())
    ].index("count")
    assert int(view.patterns.item(0, count_column).text()) == int(expected.patterns["count"].iloc[0])
    session.set_plan(FillPlan(k=3))
    assert view.status.text().startswith("The sheet or the plan changed")


@pytest.fixture
def pictures(qtbot, session, demo):
    view = PicturesView(session=session)
    qtbot.addWidget(view)
    view.resize(700, 900)
    view.show()
    qtbot.waitExposed(view)
    session.set_preview(impute(demo, FillPlan()))
    return view


def test_pictures_follow_the_preview(pictures, session):
    result = session.preview
    assert pictures.column_box.currentText() == "pH"
    pictures.column_box.setCurrentText("Nitrate")
    assert pictures.y_box.currentText() == "Nitrate"
    assert pictures.x_box.currentText() == scatter_partner(result, "Nitrate") == "Conductivity"
    axes = pictures.distribution_canvas.figure.axes
    assert axes and axes[0].get_title() == "Nitrate: measured and filled values"
    assert len(pictures.scatter.filled_rows) == int(
        (result.filled["Nitrate"] | result.filled["Conductivity"])[
            result.frame["Nitrate"].notna() & result.frame["Conductivity"].notna()
        ].sum()
    )
    session.set_preview(None)
    assert pictures.scatter is None and not pictures.column_box.isEnabled()


def _click_point(qtbot, view: PicturesView, x: float, y: float) -> None:
    """Click the scatter canvas where the data point (x, y) is drawn."""
    canvas = view.scatter_canvas
    canvas.draw()
    ax = canvas.figure.axes[0]
    px, py = ax.transData.transform((x, y))
    ratio = canvas.device_pixel_ratio
    height = canvas.figure.bbox.height
    qtbot.mouseClick(
        canvas, Qt.MouseButton.LeftButton, pos=QPoint(round(px / ratio), round((height - py) / ratio))
    )


def test_clicking_a_filled_point_emits_its_row(qtbot, pictures, session):
    result = session.preview
    pictures.choose_scatter("Conductivity", "Nitrate")
    picture = pictures.scatter
    # A filled Nitrate point far from every other point, so the click picks it alone.
    xs, ys = result.frame["Conductivity"].to_numpy(float), result.frame["Nitrate"].to_numpy(float)
    rows = list(picture.filled_rows)
    labels = result.frame.index.tolist()
    scale = np.array([np.nanstd(xs), np.nanstd(ys)])

    def isolation(row):
        i = labels.index(row)
        d = np.hypot(*((np.vstack([xs, ys]).T - [xs[i], ys[i]]) / scale).T)
        d[i] = np.inf
        return np.nanmin(d)

    row = max((r for r in rows if bool(result.filled.at[r, "Nitrate"])), key=isolation)
    i = labels.index(row)
    with qtbot.waitSignal(pictures.point_chosen, timeout=5_000) as chosen:
        _click_point(qtbot, pictures, xs[i], ys[i])
    assert chosen.args == [row, "Nitrate"]


def test_main_window_has_both_views_and_copies_the_methods_text(qtbot, demo):
    from PySide6.QtGui import QGuiApplication

    from imputer_app.gui.main_window import MainWindow
    from imputer_app.sheets import methods_paragraph

    window = MainWindow()
    qtbot.addWidget(window)
    assert window.gaps_view in window.tabs.panels() and window.pictures_view in window.tabs.panels()
    action = window.actions_["copy_methods"]
    assert action in window.findChild(type(window.menuBar().actions()[0].menu()), "menuEdit").actions()
    window.session.load(demo, DEMO, plan=FillPlan())
    window.session.set_preview(impute(demo, FillPlan()))
    QGuiApplication.clipboard().clear()
    action.trigger()
    result = window.session.preview
    assert QGuiApplication.clipboard().text() == methods_paragraph(result, result.plan, None, demo)
    row = result.log.loc[result.log["column"] == "Nitrate", "row"].iloc[3]
    window.pictures_view.point_chosen.emit(row, "Nitrate")
    current = window.table.currentIndex()
    model = window.table_model
    assert current.isValid()
    assert (model.row_label(current.row()), model.column_names()[current.column()]) == (row, "Nitrate")
