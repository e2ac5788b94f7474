"""Per-column work of a long sheet run in a few threads.

numpy releases the GIL in most of its loops over numbers, so columns worked on side
by side use more than one core; the result is the same as one after the other.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from concurrent.futures import ThreadPoolExecutor
from typing import TypeVar

from imputer_app.work import WORKERS

_In = TypeVar("_In")
_Out = TypeVar("_Out")


def map_columns(work: Callable[[_In], _Out], items: Sequence[_In], workers: int = WORKERS) -> list[_Out]:
    """``[work(item) for item in items]``, in ``workers`` threads when there is more than one item."""
    if workers <= 1 or len(items) <= 1:
        return [work(item) for item in items]
    with ThreadPoolExecutor(workers, thread_name_prefix="kinfill-columns") as pool:
        return list(pool.map(work, items))
