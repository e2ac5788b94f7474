"""The threads one long task uses: the cores this process may run on, two to four."""

from __future__ import annotations

import os

import pytest

from imputer_app import work


def test_workers_follow_the_cores_within_two_and_four() -> None:
    assert 2 <= work.WORKERS <= 4
    assert max(2, min(4, work.usable_cores())) == work.WORKERS


@pytest.mark.parametrize(("affinity", "cpus", "cores"), [({0, 1, 2}, 8, 3), (None, 6, 6), (None, None, 1)])
def test_usable_cores_read_the_affinity_where_there_is_one(
    monkeypatch: pytest.MonkeyPatch, affinity: set[int] | None, cpus: int | None, cores: int
) -> None:
    # a process limited to some cores (taskset, a container) may use only those
    if affinity is None:
        monkeypatch.delattr(os, "sched_getaffinity", raising=False)
    else:
        monkeypatch.setattr(os, "sched_getaffinity", lambda pid: affinity)
    monkeypatch.setattr(os, "cpu_count", lambda: cpus)
    assert work.usable_cores() == cores
