"""``kinfill-gui [FILE] [--register]``: start the desktop app (what a double-click runs).

``--screenshot PATH`` opens FILE, saves a picture of the window once the sheet is
shown, and quits (exit 0 when the sheet was read and the picture saved); the
real-window test and the README screenshot use it. ``--screenshot-state`` takes the
picture later: after the recovery test (its best k in use), or after a fill preview
with the first filled cell selected and its donors shown::

    kinfill-gui sample_sheets/river_survey.xlsx --screenshot docs/screenshot.png --screenshot-state preview
"""

from __future__ import annotations

import argparse
import gc
import logging
import sys
from collections.abc import Callable, Sequence
from pathlib import Path

from imputer_app import __version__

SCREENSHOT_TIMEOUT_MS = 60_000
#: How long the app waits, as it quits, for background work it asked to stop.
STOP_WAIT_MS = 600_000
#: Exit codes of ``--screenshot``: reading (or testing, filling) failed, picture not saved, too slow.
EXIT_READ_FAILED, EXIT_NOT_SAVED, EXIT_TIMEOUT = 1, 3, 4
#: What ``--screenshot-state`` can show.
SCREENSHOT_STATES = ("sheet", "recovery", "per-column", "weights", "preview")


def build_parser() -> argparse.ArgumentParser:
    """The ``kinfill-gui`` argument parser."""
    parser = argparse.ArgumentParser(prog="kinfill-gui", description="Kinfill desktop app.")
    parser.add_argument("file", nargs="?", help="sheet to open (xlsx, xlsm, xls, ods, csv, tsv)")
    parser.add_argument(
        "--register",
        action="store_true",
        help="install the launcher, icon and file types for the current user (Linux, xdg-utils)",
    )
    parser.add_argument(
        "--screenshot", metavar="PATH", help="save a picture of the window after opening FILE, then quit"
    )
    parser.add_argument(
        "--screenshot-state",
        choices=SCREENSHOT_STATES,
        default="sheet",
        help="with --screenshot: the sheet as read (default), the recovery test's result, "
        "that with each column's own k in use (per-column view), suggested weights (not applied), "
        "or a fill preview with the first filled cell's donors",
    )
    parser.add_argument("--version", action="version", version=f"kinfill-gui {__version__}")
    return parser


def app_icon() -> object:
    """The window icon from ``resources/kinfill.svg`` and ``.png`` (an empty icon if absent)."""
    from PySide6.QtGui import QIcon

    from imputer_app.gui.register import resources_dir

    icon = QIcon()
    for name in ("kinfill.svg", "kinfill.png"):
        path = resources_dir() / name
        if path.is_file():
            icon.addFile(str(path))
    return icon


def _register() -> int:
    from imputer_app.gui.register import RegisterError, register

    try:
        done = register()
    except RegisterError as exc:
        print(f"kinfill-gui: {exc}", file=sys.stderr)
        return 2
    for line in done:
        print(f"- {line}")
    return 0


def drive_to(window: object, state: str, done: Callable[[], None]) -> None:
    """Bring a window whose sheet is shown to ``state``, then call ``done``.

    ``"sheet"``: as it is. ``"recovery"``: run the recovery test with the panel's
    settings and use its best k. ``"per-column"``: that, then use each column's own k
    with the per-column view in front. ``"weights"``: the recovery state, then suggested
    weights shown (not applied). ``"preview"``: the recovery state, then preview
    the fill and select the first filled cell, so the donor panel shows where its value
    came from.
    """
    from imputer_app.gui.main_window import MainWindow

    assert isinstance(window, MainWindow) and state in SCREENSHOT_STATES
    panel = window.recovery_panel

    def tested(report: object) -> None:
        panel.report_ready.disconnect(tested)
        panel.use_best_button.click()
        if state == "per-column":
            panel.views.setCurrentWidget(panel.columns_view)
            panel.columns_view.use_each_button.click()
        if state == "weights":
            panel.views.setCurrentWidget(panel.weights_view)
            panel.weights_view.runner.finished.connect(lambda _s: done())
            panel.weights_view.run()
        elif state in ("recovery", "per-column"):
            done()
        else:
            window.preview_ready.connect(previewed)
            window.preview_fill()

    def previewed() -> None:
        window.preview_ready.disconnect(previewed)
        filled = window.table_model.fill_codes.nonzero()
        if filled[0].size:
            window.select_position(int(filled[0][0]), int(filled[1][0]))
        done()

    if state == "sheet":
        done()
        return
    panel.report_ready.connect(tested)
    window.run_recovery_test()


def save_picture(picture: object, target: Path) -> bool:
    """Save a ``QPixmap`` through the one atomic writer; a failure is one line on stderr.

    The format comes from ``target``'s ending and is passed explicitly, since the
    temporary file's name ends in ``.kinfill.tmp``. An existing picture is replaced
    (``--screenshot`` is asked for by name); a link there is replaced, not written through.
    """
    from PySide6.QtGui import QPixmap

    from imputer_app.errors import ExportError
    from imputer_app.files import atomic_target

    assert isinstance(picture, QPixmap)
    fmt = target.suffix.lstrip(".").upper() or "PNG"
    try:
        with atomic_target(target, force=True) as temp:
            if not picture.save(str(temp), fmt):
                raise ExportError(f"cannot write {target.name}: Qt could not save a {fmt} picture there")
    except ExportError as exc:
        print(f"kinfill-gui: {exc}", file=sys.stderr)
        return False
    return True


def _arrange_screenshot(window: object, app: object, target: Path, state: str = "sheet") -> None:
    """Save ``window``'s picture once it shows ``state``, then quit with the right code."""
    from PySide6.QtCore import QTimer
    from PySide6.QtWidgets import QApplication, QMainWindow

    assert isinstance(window, QMainWindow) and isinstance(app, QApplication)

    def shoot() -> None:
        target.parent.mkdir(parents=True, exist_ok=True)
        saved = save_picture(window.grab(), target)
        window.close()
        app.exit(0 if saved else EXIT_NOT_SAVED)

    window.interactive = False  # type: ignore[attr-defined]
    window.sheet_loaded.connect(  # type: ignore[attr-defined]
        lambda: drive_to(window, state, lambda: QTimer.singleShot(400, shoot))
    )
    for runner in (window.runner, window.recovery_panel.runner):  # type: ignore[attr-defined]
        runner.failed.connect(lambda *_a: app.exit(EXIT_READ_FAILED))
    QTimer.singleShot(SCREENSHOT_TIMEOUT_MS, lambda: app.exit(EXIT_TIMEOUT))


def freeze_startup_objects() -> None:
    """Leave the objects alive now (modules, classes, the window) out of every later garbage collection.

    Python's full collection walks every object it tracks, about 160,000 once Qt,
    pandas, scipy and the window are loaded, and holds the lock all threads share
    while it walks: 0.1-0.2 s in which the window cannot repaint, at moments set by
    allocation counts (often while a sheet is applied or a fill shown). These objects
    live as long as the app, so :func:`gc.freeze` moves them where collections never
    look; sheets and fills made later are collected as before.
    """
    gc.collect()  # what is garbage already is not frozen
    gc.freeze()


def main(argv: Sequence[str] | None = None) -> int:
    """Run the desktop app and return its exit code."""
    args = build_parser().parse_args(argv)
    logging.basicConfig(level=logging.WARNING, format="kinfill-gui: %(levelname)s %(name)s: %(message)s")
    if args.register:
        return _register()
    if args.screenshot and not args.file:
        print("kinfill-gui: --screenshot needs a FILE to open", file=sys.stderr)
        return 2

    from PySide6.QtCore import QTimer
    from PySide6.QtGui import QIcon
    from PySide6.QtWidgets import QApplication

    from imputer_app.gui.main_window import MainWindow
    from imputer_app.gui.window_layout import DEFAULT_SIZE

    app = QApplication.instance() or QApplication([sys.argv[0] if sys.argv else "kinfill-gui"])
    assert isinstance(app, QApplication)
    app.setApplicationName("Kinfill")
    app.setOrganizationName("Kinfill")
    app.setApplicationVersion(__version__)
    app.setDesktopFileName("kinfill")
    icon = app_icon()
    assert isinstance(icon, QIcon)
    app.setWindowIcon(icon)
    window = MainWindow()
    window.setWindowIcon(icon)
    freeze_startup_objects()
    if args.screenshot:
        window.resize(*DEFAULT_SIZE)
        _arrange_screenshot(window, app, Path(args.screenshot), args.screenshot_state)
    window.show()
    if args.file:
        path = Path(args.file).expanduser()
        # A double-click asks for the worksheet of a multi-sheet workbook; a screenshot never asks.
        options: dict[str, object] | None = {} if args.screenshot else None
        QTimer.singleShot(0, lambda: window.open_path(path.resolve() if path.exists() else path, options))
    code = app.exec()
    # a screenshot's time limit quits with the recovery test or a fill still running; a job
    # between two checks for a cancel is let finish (a thread alive at exit aborts Python)
    window.stop_work(STOP_WAIT_MS)
    return int(code)


if __name__ == "__main__":
    sys.exit(main())
