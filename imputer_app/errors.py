"""The exception family whose messages a lab analyst can act on.

The CLI and the GUI show ``str(error)`` for a :class:`KinfillError` and never a
traceback, so every message is one complete sentence that names the file, column,
setting or value at fault and, where possible, what to do instead.
"""


class KinfillError(ValueError):
    """A problem with the user's input or settings, explained in one line."""


class PlanError(KinfillError):
    """A fill plan is invalid or does not match the sheet it is applied to."""


class SheetError(KinfillError):
    """A spreadsheet cannot be read (missing, corrupt, empty, unsupported, ...)."""


class ExportError(KinfillError):
    """A result cannot be written (folder not writable, file locked, disk full, ...)."""


class Cancelled(Exception):  # noqa: N818 - reads naturally at the raise site
    """Long work was stopped by the user's cancel flag; nothing was changed."""
