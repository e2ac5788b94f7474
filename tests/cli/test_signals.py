"""Ctrl+C, SIGTERM and SIGHUP stop ``kinfill`` cleanly, at any moment (README: "What
Kinfill promises about your files").

Each case runs ``python -m imputer_app fill`` as a real process on a sheet that takes
far longer than the test waits, sends the signal, and checks: exit code 128 + the
signal's number, one line and no traceback on stderr, no output file, no temporary file.
The moment "right after start" is found from ``/proc/<pid>/status`` (the process has
installed its handlers: SIGTERM is among the caught signals), so the test does not
depend on how fast a busy machine starts Python.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from imputer_app.files import TEMP_SUFFIX

ROOT = Path(__file__).resolve().parents[2]

pytestmark = pytest.mark.skipif(not Path("/proc/self/status").exists(), reason="needs Linux /proc")


@pytest.fixture(scope="module")
def large(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """40,000 rows x 8 number columns, 10 % gaps (invented, seed 1): many seconds of work."""
    rng = np.random.default_rng(1)
    values = rng.normal(size=(40_000, 8)).round(3).astype(str)
    values[rng.random(values.shape) < 0.1] = ""
    path = tmp_path_factory.mktemp("signals") / "large.csv"
    path.write_text("a,b,c,d,e,f,g,h\n" + "\n".join(map(",".join, values)) + "\n", encoding="utf-8")
    return path


def handlers_installed(pid: int) -> bool:
    """True once the process catches SIGTERM (``main`` has installed its handlers)."""
    try:
        status = Path(f"/proc/{pid}/status").read_text()
    except OSError:
        return False
    caught = next(line for line in status.splitlines() if line.startswith("SigCgt:"))
    return bool(int(caught.split()[1], 16) >> (signal.SIGTERM - 1) & 1)


def start(sheet: Path, out_dir: Path) -> subprocess.Popen[str]:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    argv = [sys.executable, "-m", "imputer_app", "fill", str(sheet), "--out", str(out_dir / "o.xlsx")]
    return subprocess.Popen(argv, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)


@pytest.mark.parametrize(
    ("signum", "delay"),
    [
        pytest.param(signal.SIGINT, 0.0, id="ctrl-c-while-starting"),
        pytest.param(signal.SIGINT, 1.5, id="ctrl-c-while-working"),
        pytest.param(signal.SIGTERM, 0.0, id="sigterm-while-starting"),
        pytest.param(signal.SIGTERM, 1.5, id="sigterm-while-working"),
        pytest.param(signal.SIGHUP, 1.5, id="sighup-while-working"),
    ],
)
def test_a_stop_signal_leaves_nothing_written(
    signum: signal.Signals, delay: float, large: Path, tmp_path: Path
) -> None:
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    process = start(large, out_dir)
    try:
        deadline = time.monotonic() + 20
        while not handlers_installed(process.pid):
            assert process.poll() is None and time.monotonic() < deadline, "kinfill never started"
            time.sleep(0.005)
        time.sleep(delay)
        assert process.poll() is None, "the work finished before the signal; use a larger sheet"
        process.send_signal(signum)
        stdout, stderr = process.communicate(timeout=30)
    finally:
        if process.poll() is None:
            process.kill()
            process.communicate()
    assert process.returncode == 128 + signum, stderr
    assert "Traceback" not in stderr
    # While the arguments are still being read the command is not known yet.
    assert stderr.strip().splitlines()[-1] in (
        "kinfill fill: stopped; nothing written",
        "kinfill: stopped; nothing written",
    )
    assert stdout == ""
    assert list(out_dir.iterdir()) == []
    assert [p for p in large.parent.iterdir() if p.name.endswith(TEMP_SUFFIX)] == []


@pytest.mark.parametrize("signum", [signal.SIGTERM, signal.SIGHUP])
def test_sigterm_and_sighup_stop_the_fill_like_ctrl_c(
    signum: signal.Signals,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
) -> None:
    # In-process: the first signal sets the stop flag; the engine notices and stops.
    import imputer_app.engine
    from tests.cli.helpers import run

    real = imputer_app.engine.impute

    def signalled(*args: object, **kwargs: object) -> object:
        os.kill(os.getpid(), signum)
        return real(*args, **kwargs)  # type: ignore[arg-type]

    monkeypatch.setattr(imputer_app.engine, "impute", signalled)
    handler_before = signal.getsignal(signum)
    sheet = ROOT / "sample_sheets" / "river_survey.csv"
    code, stdout, err = run(["fill", sheet, "--out", tmp_path / "o.csv"], capsys)
    assert code == 128 + signum, err
    assert f"stopping ({signum.name} received)" in err and err.strip().endswith("stopped; nothing written")
    assert stdout == "" and list(tmp_path.iterdir()) == []
    assert signal.getsignal(signum) == handler_before  # the handlers of this process are back
