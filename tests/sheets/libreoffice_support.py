"""Workbooks converted by LibreOffice (headless), an independent writer of .xls and .ods."""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest

#: Tests that need LibreOffice are skipped where it is not installed.
needs_soffice = pytest.mark.skipif(shutil.which("soffice") is None, reason="LibreOffice is not installed")


def convert(source: Path, fmt: str, folder: Path) -> Path:
    """Return ``source`` converted by LibreOffice to ``fmt`` ("xls", "ods") in ``folder``."""
    profile = (folder / "libreoffice-profile").as_uri()  # never the user's own profile
    subprocess.run(
        ["soffice", "--headless", "--norestore", f"-env:UserInstallation={profile}",
         "--convert-to", fmt, "--outdir", str(folder), str(source)],
        check=True, capture_output=True, timeout=180,
    )  # fmt: skip
    converted = folder / f"{source.stem}.{fmt}"
    assert converted.is_file(), f"LibreOffice did not write {converted.name}"
    return converted
