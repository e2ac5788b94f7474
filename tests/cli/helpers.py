"""Shared helpers of the command-line tests."""

from __future__ import annotations

from collections.abc import Sequence

import pytest

from imputer_app import cli


def run(argv: Sequence[object], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    """Run ``kinfill`` in-process; return its exit code, standard output and standard error."""
    code = cli.main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err
