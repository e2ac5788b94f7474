"""Shared test set-up: Qt runs offscreen, sample sheets are found by path."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_sheets"


@pytest.fixture
def samples_dir() -> Path:
    """The folder of generated demo sheets."""
    return SAMPLES
