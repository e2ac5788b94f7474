"""The package's shape: layers import without Qt, entry points answer, exports resolve."""

from __future__ import annotations

import importlib
import os
import subprocess
import sys
from pathlib import Path

import pytest

import imputer_app

BIN = Path(sys.executable).parent
QT_FREE = ["imputer_app.engine", "imputer_app.validation", "imputer_app.sheets", "imputer_app.charts",
           "imputer_app.plan", "imputer_app.cli"]


@pytest.mark.parametrize("module", QT_FREE)
def test_core_packages_import_without_qt(module):
    # A fresh interpreter, so that Qt loaded by other tests cannot hide an import.
    code = f"import sys, {module}; print('PySide6' in sys.modules or 'shiboken6' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


@pytest.mark.parametrize("package", ["imputer_app.engine", "imputer_app.validation", "imputer_app.sheets",
                                     "imputer_app.charts"])
def test_public_names_resolve_and_are_sorted(package):
    module = importlib.import_module(package)
    names = getattr(module, "__all__", [])
    assert names == sorted(names)
    for name in names:
        assert getattr(module, name) is not None


def test_public_contract_names():
    # DESIGN.md "Public contract": these four imports are what users and tests rely on.
    from imputer_app.engine import impute
    from imputer_app.plan import FillPlan
    from imputer_app.sheets import read_sheet, write_result
    from imputer_app.validation import recovery_test

    assert callable(impute) and callable(recovery_test) and callable(read_sheet) and callable(write_result)
    assert FillPlan().k >= 1


@pytest.mark.parametrize("command", [[str(BIN / "kinfill"), "--version"],
                                     [sys.executable, "-m", "imputer_app", "--version"]])
def test_version_is_printed(command):
    if not Path(command[0]).exists():
        pytest.skip("package not installed into this interpreter's environment")
    env = {**os.environ, "PYTHONPATH": str(Path(imputer_app.__file__).parent.parent)}
    out = subprocess.run(command, capture_output=True, text=True, env=env, check=False)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == f"kinfill {imputer_app.__version__}"


def test_cautions_say_filled_values_are_estimates():
    text = imputer_app.CAUTIONS.lower()
    for phrase in ("estimates", "never report a filled value as a measurement", "diagnosis",
                   "regulatory compliance", "qa procedures"):
        assert phrase in text
