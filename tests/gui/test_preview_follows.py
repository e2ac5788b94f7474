"""The preview follows the k control: moving k after a preview re-previews without a new search."""

from __future__ import annotations

import pytest
from pandas.testing import assert_frame_equal

from imputer_app.engine import _search, impute
from imputer_app.gui.state import Session
from imputer_app.sheets import read_sheet


@pytest.fixture
def searches(monkeypatch: pytest.MonkeyPatch) -> list[int]:
    """Counts the neighbour searches (every search of a fill goes through ``search_cells``)."""
    calls: list[int] = []
    original = _search.search_cells

    def counted(*args, **kwargs):
        calls.append(1)
        return original(*args, **kwargs)

    monkeypatch.setattr(_search, "search_cells", counted)
    return calls


def test_the_session_previews_through_its_neighbour_cache(demo, searches):
    # Qt-free: the session's preview job, then a change of k and of the rule
    session = Session()
    session.load(read_sheet(demo))
    session.set_preview(session.preview_job()(None, None))
    first = len(searches)
    assert first >= 1 and session.following == session.plan
    session.set_plan(session.plan.replace(k=3, numeric_rule="median"))
    assert session.preview is None and session.wants_preview
    result = session.preview_job()(None, None)
    assert len(searches) == first  # re-combined
    fresh = impute(session.sheet, session.plan)
    assert_frame_equal(result.frame, fresh.frame, check_exact=True)
    assert_frame_equal(result.log, fresh.log, check_exact=True)
    # a change of who is near stops the following
    session.set_preview(result)
    session.set_plan(session.plan.replace(scaling="range"))
    assert not session.wants_preview and session.following is None


def test_moving_k_after_a_preview_re_previews_without_a_search(window, qtbot, searches):
    with qtbot.waitSignal(window.preview_ready, timeout=60_000):
        window.actions_["preview"].trigger()
    first = len(searches)
    assert first >= 1 and window.session.preview is not None
    k = window.session.plan.k
    with qtbot.waitSignal(window.preview_ready, timeout=30_000):
        window.setup.k_spin.setValue(k + 2)  # the k control itself
    qtbot.waitUntil(lambda: not window.runner.is_running(), timeout=10_000)
    assert len(searches) == first  # no new search
    plan = window.session.plan
    assert plan.k == k + 2 and window.session.preview is not None
    fresh = impute(window.session.sheet, plan)
    assert_frame_equal(window.session.preview.frame, fresh.frame, check_exact=True)
    assert_frame_equal(window.session.preview.log, fresh.log, check_exact=True)


def test_moves_of_k_during_a_preview_end_on_the_latest_k(window, qtbot, searches):
    with qtbot.waitSignal(window.preview_ready, timeout=60_000):
        window.actions_["preview"].trigger()
    k = window.session.plan.k
    for step in (1, 2, 3):  # faster than the previews: the last k wins
        window.setup.k_spin.setValue(k + step)
    qtbot.waitUntil(
        lambda: window.session.preview is not None and window.session.preview.plan.k == k + 3,
        timeout=30_000,
    )
    qtbot.waitUntil(lambda: not window.runner.is_running() and not window.follower.waiting, timeout=10_000)
    assert window.session.preview.plan.k == window.session.plan.k == k + 3


def test_a_change_of_similarity_weights_drops_the_preview_and_waits(window, qtbot, searches):
    with qtbot.waitSignal(window.preview_ready, timeout=60_000):
        window.actions_["preview"].trigger()
    first = len(searches)
    setup = window.setup
    setup.select_columns(["Nitrate"])
    setup.weight_spin.setValue(2.5)
    qtbot.wait(200)
    assert window.session.preview is None and not window.runner.is_running()
    assert len(searches) == first  # nothing started on its own
