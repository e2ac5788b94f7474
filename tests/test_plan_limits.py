"""Plans stay fast and their errors short at any size; odd values of k are PlanErrors."""

from __future__ import annotations

import math
import os
import threading
import time
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest

from imputer_app.errors import PlanError
from imputer_app.plan import FillPlan
from imputer_app.plan_text import LISTED_NAMES, MAX_PLAN_BYTES, name_list

MANY = 20_000
#: Generous: the work is linear and takes milliseconds; quadratic work took seconds.
QUICK = 1.0


def timed(call):
    start = time.perf_counter()
    try:
        return call(), time.perf_counter() - start
    except PlanError as exc:
        return exc, time.perf_counter() - start


def short_line(error: object) -> str:
    assert isinstance(error, PlanError)
    text = str(error)
    assert "\n" not in text and len(text) < 400
    return text


# ------------------------------------------------------------------ many names
def test_twenty_thousand_names_are_listed_quickly() -> None:
    names = tuple(f"c{i}" for i in range(MANY))
    plan = FillPlan(similarity_columns=names, weights={n: 2.0 for n in names[::-1]})
    listed, seconds = timed(plan.named_columns)
    assert seconds < QUICK
    assert listed == list(names)


def test_a_missing_column_error_lists_a_few_names_and_a_count() -> None:
    plan = FillPlan(similarity_columns=tuple(f"c{i}" for i in range(MANY)))
    error, seconds = timed(lambda: plan.check_columns(["c0", "c1", "other"]))
    assert seconds < QUICK
    text = short_line(error)
    assert "'c2', 'c3', 'c4', 'c5', 'c6' and 19,993 more" in text


def test_many_weights_are_linear() -> None:
    names = [f"w{i}" for i in range(200_000)]
    plan = FillPlan(weights=dict.fromkeys(names, 1.5))
    listed, seconds = timed(plan.named_columns)
    assert seconds < QUICK and len(listed) == 200_000


@pytest.mark.parametrize(
    "make",
    [
        lambda names: FillPlan(similarity_columns=(*names, names[-1])),  # the twin at the very end
        lambda names: FillPlan(similarity_columns=names, carried_columns=names),
    ],
    ids=["twice", "both roles"],
)
def test_errors_about_many_names_are_quick_and_short(make) -> None:
    names = tuple(f"c{i}" for i in range(MANY))
    error, seconds = timed(lambda: make(names))
    assert seconds < QUICK
    short_line(error)


def test_one_huge_name_is_cut_in_messages() -> None:
    huge = "x" * 1_000_000
    text = short_line(timed(lambda: FillPlan(kinds={huge: "colour"}))[0])
    assert "'" + "x" * 58 + "\u2026 must be one of" in text  # 60 characters in all


@pytest.mark.parametrize(
    "names, limit, expected",
    [(["a"], 5, "'a'"), (["a", "b", "c"], 2, "'a', 'b' and 1 more"), ([], 5, ""), (list("abcdef"), 6, None)],
)
def test_name_list(names, limit, expected) -> None:
    expected = expected if expected is not None else ", ".join(map(repr, names))
    assert name_list(names, limit) == expected
    assert LISTED_NAMES == 5


# ------------------------------------------------------------------ k
@pytest.mark.parametrize(
    "k", [math.nan, math.inf, -math.inf, 1.5, "3", None, True, [3], np.float64("nan"), Fraction(7, 2)]
)
def test_a_k_that_is_not_a_whole_number_is_a_plan_error(k) -> None:
    with pytest.raises(PlanError, match=r"^k must be a whole number of at least 1; got "):
        FillPlan(k=k)


@pytest.mark.parametrize(
    "k, expected", [(3, 3), (3.0, 3), (np.int64(4), 4), (Fraction(6, 1), 6), (10**9, 10**9)]
)
def test_whole_numbers_of_any_type_are_k(k, expected) -> None:
    plan = FillPlan(k=k)
    assert plan.k == expected and type(plan.k) is int


@pytest.mark.parametrize("k", [0, -1, -5.0])
def test_k_below_one_is_refused(k) -> None:
    with pytest.raises(PlanError, match="k must be at least 1"):
        FillPlan(k=k)


@pytest.mark.parametrize("value", ["nan", "inf", "-inf", "2.5", "1e9"])
def test_k_in_a_plan_file_must_be_a_whole_number(tmp_path, value) -> None:
    path = tmp_path / "p.plan.toml"
    path.write_text(f"format = 1\nk = {value}\n")
    with pytest.raises(PlanError, match=r"p\.plan\.toml: k must be a whole number; got .* \(line 2\)"):
        FillPlan.load(path)


def test_a_k_larger_than_any_sheet_is_a_valid_plan(tmp_path) -> None:
    path = FillPlan(k=10**9).save(tmp_path / "p.plan.toml")
    assert FillPlan.load(path).k == 10**9


# ------------------------------------------------------------------ plan files
def load_in_thread(path: Path) -> object:
    """Load ``path``; fail the test rather than hang if the read blocks."""
    outcome: list[object] = []

    def load() -> None:
        try:
            outcome.append(FillPlan.load(path))
        except PlanError as exc:
            outcome.append(exc)

    worker = threading.Thread(target=load, daemon=True)
    worker.start()
    worker.join(10)
    assert not worker.is_alive(), f"loading {path} blocked"
    return outcome[0]


def test_a_pipe_is_refused_without_blocking(tmp_path) -> None:
    fifo = tmp_path / "p.plan.toml"
    os.mkfifo(fifo)
    text = short_line(load_in_thread(fifo))
    assert "not an ordinary file" in text and str(fifo) in text


@pytest.mark.skipif(not Path("/dev/zero").exists(), reason="no /dev/zero on this system")
def test_a_device_is_refused() -> None:
    error, seconds = timed(lambda: FillPlan.load("/dev/zero"))
    assert seconds < QUICK
    assert "/dev/zero: it is not an ordinary file" in short_line(error)


def test_a_folder_is_refused(tmp_path) -> None:
    assert "it is a folder" in short_line(load_in_thread(tmp_path))


def test_a_plan_over_the_size_limit_is_refused_before_reading(tmp_path) -> None:
    path = tmp_path / "big.plan.toml"
    path.write_bytes(b"format = 1\n" + b"#" * MAX_PLAN_BYTES + b"\n")
    text = short_line(load_in_thread(path))
    assert "at most 1 MB" in text and f"{path.stat().st_size:,} bytes" in text


def test_a_plan_just_under_the_limit_is_read(tmp_path) -> None:
    path = tmp_path / "ok.plan.toml"
    head = b"format = 1\nk = 7\n#"
    path.write_bytes(head + b"#" * (MAX_PLAN_BYTES - len(head) - 1) + b"\n")
    assert path.stat().st_size == MAX_PLAN_BYTES
    assert FillPlan.load(path).k == 7


@pytest.mark.parametrize(
    "content, words",
    [(b"k = 3\n\xff\xfe\n", "not UTF-8 text (byte 6)"), (None, "plan file not found")],
)
def test_unreadable_plans(tmp_path, content, words) -> None:
    path = tmp_path / "p.plan.toml"
    if content is not None:
        path.write_bytes(content)
    assert words in short_line(load_in_thread(path))


def test_a_plan_of_many_weights_loads_quickly(tmp_path) -> None:
    lines = [f'"column {i}" = 1.5' for i in range(MANY)]
    path = tmp_path / "p.plan.toml"
    path.write_text("format = 1\n[weights]\n" + "\n".join(lines) + "\n")
    plan, seconds = timed(lambda: FillPlan.load(path))
    assert isinstance(plan, FillPlan) and len(plan.weights) == MANY
    assert seconds < 5 * QUICK
    error, seconds = timed(lambda: plan.check_columns(["column 0"]))
    assert seconds < QUICK and "and 19,994 more" in short_line(error)
