"""One BLAS thread while the search's own worker threads run side by side."""

from __future__ import annotations

from contextlib import AbstractContextManager, nullcontext


def one_blas_thread() -> AbstractContextManager[object]:
    """Run BLAS on one thread while worker threads search side by side.

    Each worker alternates modest matrix products with numpy work; BLAS threads of their
    own would compete with the workers (and, idle between products, spin on the cores:
    measured 2-3x slower on a busy two-core machine; small products of a few hundred
    rows took 10-15x the time of one thread's).
    """
    try:
        from threadpoolctl import threadpool_limits  # installed with scikit-learn
    except ImportError:  # pragma: no cover - then BLAS keeps its own setting
        return nullcontext()
    return threadpool_limits(limits=1, user_api="blas")
