"""The base of Kinfill's table models: a flat table (no tree) whose size the subclass states."""

from __future__ import annotations

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex

#: What Qt passes as a model index.
Index = QModelIndex | QPersistentModelIndex


class FlatTableModel(QAbstractTableModel):
    """A table model with rows and columns only; subclasses implement :meth:`table_shape`."""

    def table_shape(self) -> tuple[int, int]:
        """Return ``(rows, columns)`` of the table."""
        raise NotImplementedError

    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: B008 - Qt's signature
        """Number of rows (0 under any parent: a flat table has no children)."""
        return 0 if parent.isValid() else self.table_shape()[0]

    def columnCount(self, parent: Index = QModelIndex()) -> int:  # noqa: B008 - Qt's signature
        """Number of columns (0 under any parent)."""
        return 0 if parent.isValid() else self.table_shape()[1]
