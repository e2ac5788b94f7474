"""Render ``kinfill.svg`` to ``kinfill.png`` (256 x 256) with Qt's SVG renderer.

Usage: ``QT_QPA_PLATFORM=offscreen python resources/render_icon.py [SIZE]``.
A development helper, not part of the package (only ``gui/`` may import Qt there).
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent


def render(size: int = 256, svg: Path = HERE / "kinfill.svg", png: Path = HERE / "kinfill.png") -> Path:
    """Draw ``svg`` on a transparent ``size`` x ``size`` image and save it as ``png``."""
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtCore import Qt
    from PySide6.QtGui import QGuiApplication, QImage, QPainter
    from PySide6.QtSvg import QSvgRenderer

    _app = QGuiApplication.instance() or QGuiApplication([])
    renderer = QSvgRenderer(str(svg))
    if not renderer.isValid():
        raise SystemExit(f"cannot read {svg}")
    image = QImage(size, size, QImage.Format.Format_ARGB32)
    image.fill(Qt.GlobalColor.transparent)
    painter = QPainter(image)
    painter.setRenderHint(QPainter.RenderHint.Antialiasing)
    renderer.render(painter)
    painter.end()
    if not image.save(str(png)):
        raise SystemExit(f"cannot write {png}")
    return png


if __name__ == "__main__":
    print(render(int(sys.argv[1]) if len(sys.argv) > 1 else 256))
