"""Command-line arguments, exit codes and one-line messages (no fill needed)."""

from __future__ import annotations

import io
import os
import signal
import subprocess
import sys
from pathlib import Path

import pytest

import imputer_app
from imputer_app.cli import commands
from imputer_app.cli.progress import StopFlag, TextProgress, render_bar, stop_on_ctrl_c
from tests.cli.helpers import run

ROOT = Path(__file__).resolve().parents[2]
DEMO_XLSX = ROOT / "sample_sheets" / "river_survey.xlsx"


def assert_one_line(err: str) -> None:
    assert err.endswith("\n") and err.count("\n") == 1, err
    assert "Traceback" not in err


def test_version(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = run(["--version"], capsys)
    assert code == 0 and out.strip() == f"kinfill {imputer_app.__version__}"


def test_python_dash_m_version() -> None:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    done = subprocess.run(
        [sys.executable, "-m", "imputer_app", "--version"],
        capture_output=True,
        text=True,
        env=env,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == f"kinfill {imputer_app.__version__}"


@pytest.mark.parametrize("command", ["fill", "score-k", "plan", "gui"])
def test_each_command_help_has_examples(command: str, capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = run([command, "--help"], capsys)
    assert code == 0
    assert "examples:" in out and f"kinfill {command}" in out.split("examples:")[1]


def test_top_help_lists_commands(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = run(["--help"], capsys)
    assert code == 0
    for command in ("fill", "score-k", "plan", "gui"):
        assert command in out


@pytest.mark.parametrize(
    ("argv", "words"),
    [
        ([], "choose a command"),
        (["frobnicate"], "invalid choice"),
        (["fill"], "required: INPUT"),
        (["fill", "x.xlsx", "--bogus"], "unrecognized arguments: --bogus"),
        (["fill", "x.xlsx", "--k", "five"], "best or best-per-column; got 'five'"),
        (["fill", "x.xlsx", "--weight", "pH"], "expected COLUMN=WEIGHT"),
        (["fill", "x.xlsx", "--weight", "pH=heavy"], "weight for column 'pH' must be a number"),
        (["fill", "x.xlsx", "--similarity", " , "], "expected comma-separated column names"),
        (["fill", "x.xlsx", "--scaling", "log"], "invalid choice: 'log'"),
        (["fill", "x.xlsx", "--plan", "a.toml", "--plan-from", "b.xlsx"], "not allowed with argument"),
        (["score-k", "x.xlsx", "--k-range", "9-3"], "runs backwards"),
        (["score-k", "x.xlsx", "--k-range", "0-5"], "k must be at least 1"),
        (["score-k", "x.xlsx", "--k-range", "a-b"], "expected k values"),
        (["score-k", "x.xlsx", "--hide", "1.5"], "between 0 and 1"),
        (["score-k", "x.xlsx", "--repeats", "0"], "at least 1"),
        (["score-k", "x.xlsx", "--masking", "rows"], "invalid choice: 'rows'"),
    ],
)
def test_usage_errors_are_one_line_exit_2(
    argv: list[str], words: str, capsys: pytest.CaptureFixture[str]
) -> None:
    code, out, err = run(argv, capsys)
    assert code == 2 and out == ""
    assert_one_line(err)
    assert words in err


@pytest.mark.parametrize("command", ["fill", "score-k", "plan"])
def test_missing_file_exit_2(command: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, _, err = run([command, str(tmp_path / "absent.xlsx")], capsys)
    assert code == 2
    assert_one_line(err)
    assert f"kinfill {command}: file not found: " in err and "absent.xlsx" in err


@pytest.mark.parametrize(
    ("options", "words"),
    [
        (["--k", "0"], "--k: expected a whole number of at least 1; got 0"),
        (["--k", "-3"], "--k: expected a whole number of at least 1; got -3"),
        (["--weight", "Nitrate=-1"], "weight for column 'Nitrate' must be 0 or more; got -1"),
        (["--weight", "Nitrate=5000"], "at most 1000"),
        (["--weight", "Nitrate=nan"], "must be a finite number"),
    ],
)
def test_bad_settings_exit_2_before_reading(
    options: list[str], words: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out.xlsx"
    code, _, err = run(["fill", str(DEMO_XLSX), "--out", str(out), *options], capsys)
    assert code == 2
    assert_one_line(err)
    assert words in err
    assert not out.exists()


@pytest.mark.parametrize(
    ("out_name", "words"),
    [("result.txt", "--out must end in .xlsx or .csv"), ("nowhere/result.xlsx", "folder not found")],
)
def test_bad_output_names_exit_2(
    out_name: str, words: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code, _, err = run(["fill", str(DEMO_XLSX), "--out", str(tmp_path / out_name)], capsys)
    assert code == 2 and words in err
    assert_one_line(err)


def test_output_never_replaces_the_input(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    copy = tmp_path / "in.xlsx"
    copy.write_bytes(DEMO_XLSX.read_bytes())
    code, _, err = run(["fill", str(copy), "--out", str(copy), "--force"], capsys)
    assert code == 2 and "never overwrites its input" in err
    assert copy.read_bytes() == DEMO_XLSX.read_bytes()


def test_existing_output_needs_force(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "taken.xlsx"
    out.write_bytes(b"keep me")
    code, _, err = run(["fill", str(DEMO_XLSX), "--out", str(out)], capsys)
    assert code == 2 and "already exists; add --force to replace" in err
    assert out.read_bytes() == b"keep me"


def test_existing_plan_needs_force(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "taken.plan.toml"
    out.write_text("k = 3\n", encoding="utf-8")
    code, _, err = run(["plan", str(DEMO_XLSX), "--out", str(out)], capsys)
    assert code == 2 and "add --force" in err
    assert out.read_text(encoding="utf-8") == "k = 3\n"


def test_plan_file_errors_exit_2_with_key_and_line(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    plan = tmp_path / "bad.plan.toml"
    plan.write_text("format = 1\nk = 5\nneighbours = 3\n", encoding="utf-8")
    code, _, err = run(
        ["fill", str(DEMO_XLSX), "--plan", str(plan), "--out", str(tmp_path / "o.xlsx")], capsys
    )
    assert code == 2
    assert_one_line(err)
    assert "unknown key 'neighbours' (line 3)" in err


# --------------------------------------------------------------- faults, gui
def test_internal_fault_exit_1_one_line(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    def broken(args: object) -> int:
        raise RuntimeError("kaboom")

    monkeypatch.setattr(commands, "run_plan", broken)
    code, _, err = run(["plan", str(DEMO_XLSX)], capsys)
    assert code == 1
    assert_one_line(err)
    assert "internal error: RuntimeError: kaboom" in err and "--debug" in err


@pytest.mark.parametrize("where", [["--debug", "plan"], ["plan", "--debug"]])
def test_debug_shows_the_traceback(
    where: list[str], monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    def broken(args: object) -> int:
        raise RuntimeError("kaboom")

    monkeypatch.setattr(commands, "run_plan", broken)
    code, _, err = run([*where, str(DEMO_XLSX)], capsys)
    assert code == 1
    assert "Traceback" in err and "kaboom" in err


@pytest.mark.parametrize(("argv", "expected"), [(["gui"], []), (["gui", str(DEMO_XLSX)], [str(DEMO_XLSX)])])
def test_gui_hands_the_file_to_the_app(
    argv: list[str], expected: list[str], monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    seen: list[list[str]] = []

    def fake_main(args: list[str]) -> int:
        seen.append(list(args))
        return 0

    from imputer_app.gui import launch

    monkeypatch.setenv("QT_QPA_PLATFORM", "offscreen")
    monkeypatch.setattr(launch, "main", fake_main)
    code, _, _ = run(argv, capsys)
    assert code == 0 and seen == [expected]


def test_gui_without_a_display_says_so(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    from imputer_app.gui import launch

    opened: list[object] = []
    monkeypatch.setattr(commands.sys, "platform", "linux")
    for name in ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM"):
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setattr(launch, "main", opened.append)
    code, _, err = run(["gui"], capsys)
    assert opened == []
    assert code == 2
    assert_one_line(err)
    assert "no display found" in err and "kinfill fill" in err


def test_gui_missing_file_exit_2(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, _, err = run(["gui", str(tmp_path / "absent.xlsx")], capsys)
    assert code == 2 and "file not found" in err


# ------------------------------------------------------------ progress, Ctrl+C
class FakeTerminal(io.StringIO):
    def isatty(self) -> bool:
        return True


@pytest.mark.parametrize(
    ("done", "total", "text"),
    [
        (0, 10, "reading      [........]   0%"),
        (5, 10, "reading      [####....]  50%"),
        (10, 10, "reading      [########] 100%"),
        (12, 10, "reading      [########] 100%"),
        (7, 0, "reading      7"),
    ],
)
def test_render_bar(done: int, total: int, text: str) -> None:
    assert render_bar("reading", done, total, width=8) == text


def test_progress_draws_only_on_a_terminal() -> None:
    pipe, tty = io.StringIO(), FakeTerminal()
    for stream in (pipe, tty):
        bar = TextProgress(stream)
        report = bar.stage("filling")
        report(0, 4)
        report(4, 4)
        bar.done()
    assert pipe.getvalue() == ""
    drawn = tty.getvalue()
    assert "filling" in drawn and "100%" in drawn and drawn.endswith("\r\033[K")


def test_first_ctrl_c_sets_the_flag_second_interrupts() -> None:
    with stop_on_ctrl_c(io.StringIO()) as flag:
        assert isinstance(flag, StopFlag) and not flag.is_set()
        os.kill(os.getpid(), signal.SIGINT)
        assert flag.is_set()
        with pytest.raises(KeyboardInterrupt):
            os.kill(os.getpid(), signal.SIGINT)
    assert signal.getsignal(signal.SIGINT) is signal.default_int_handler


def test_ctrl_c_stops_and_writes_nothing(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    def interrupted_read(*args: object, **kwargs: object) -> None:
        raise KeyboardInterrupt

    monkeypatch.setattr(commands, "read_input", interrupted_read)
    out = tmp_path / "out.xlsx"
    code, stdout, err = run(["fill", str(DEMO_XLSX), "--out", str(out)], capsys)
    assert code == 130 and stdout == ""
    assert err.strip() == "kinfill fill: stopped; nothing written"
    assert list(tmp_path.iterdir()) == []
