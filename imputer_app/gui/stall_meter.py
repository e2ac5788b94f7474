"""Measure how long the window's event loop goes without turning.

A timer ticks every few milliseconds; the largest gap between two ticks is the longest
the window could not answer a key, a click or a repaint. The tests and the app
benchmark use it to check that long work stays off the window's thread.
"""

from __future__ import annotations

from PySide6.QtCore import QElapsedTimer, QObject, QTimer

#: Tick interval in milliseconds: short against the 100 ms a user notices.
TICK_MS = 10


class StallMeter(QObject):
    """Record the largest gap between event-loop turns while started.

    Examples
    --------
    >>> meter = StallMeter()  # doctest: +SKIP
    >>> meter.start(); ...; meter.stop()  # doctest: +SKIP
    >>> meter.worst_ms  # doctest: +SKIP
    42
    """

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._clock = QElapsedTimer()
        self._timer = QTimer(self)
        self._timer.setInterval(TICK_MS)
        self._timer.timeout.connect(self._tick)
        self._last = 0
        self.worst_ms = 0

    def start(self) -> None:
        """Start measuring from now (the worst gap is reset)."""
        self.worst_ms = 0
        self._clock.start()
        self._last = 0
        self._timer.start()

    def stop(self) -> int:
        """Stop measuring; return the worst gap in milliseconds (the tick interval included)."""
        self._tick()
        self._timer.stop()
        return self.worst_ms

    def _tick(self) -> None:
        now = self._clock.elapsed()
        self.worst_ms = max(self.worst_ms, now - self._last)
        self._last = now
