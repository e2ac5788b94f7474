"""Progress and cancel checks for an export, counted in rows written."""

from __future__ import annotations

from imputer_app.work import CancelFlag, Progress, raise_if_cancelled, report


class Ticker:
    """Count work done, report it and stop on cancel.

    Parameters
    ----------
    progress : callable or None
        ``progress(done, total)``.
    cancel : cancel flag or None
        Checked at every :meth:`step`.
    total : int
        Units of work in the whole export (rows written, roughly).
    """

    def __init__(self, progress: Progress | None, cancel: CancelFlag | None, total: int) -> None:
        self.progress = progress
        self.cancel = cancel
        self.total = max(int(total), 1)
        self.done = 0

    def step(self, units: int = 0) -> None:
        """Add ``units`` done, report progress, raise ``Cancelled`` when asked to stop."""
        raise_if_cancelled(self.cancel)
        self.done = min(self.done + int(units), self.total)
        report(self.progress, self.done, self.total)

    def finish(self) -> None:
        """Report the work complete."""
        self.done = self.total
        report(self.progress, self.total, self.total)
