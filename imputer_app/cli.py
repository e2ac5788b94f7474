"""Headless commands: ``kinfill fill``, ``kinfill score-k``, ``kinfill plan``, ``kinfill gui``."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from imputer_app import __version__


def build_parser() -> argparse.ArgumentParser:
    """Return the ``kinfill`` argument parser."""
    parser = argparse.ArgumentParser(prog="kinfill", description="Fill gaps in measurement sheets by kNN.")
    parser.add_argument("--version", action="version", version=f"kinfill {__version__}")
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line and return its exit code."""
    build_parser().parse_args(argv)
    print("not built yet: the fill commands arrive with the engine", file=sys.stderr)
    return 1
