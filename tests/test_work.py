"""The threads one long task uses: the cores this process may run on, two to four."""

from __future__ import annotations

import os
from pathlib import Path

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
    monkeypatch.setattr(work, "CPU_QUOTA_FILE", Path("/nonexistent/cpu.max"))
    assert work.usable_cores() == cores


@pytest.mark.parametrize(
    ("quota", "cores"),
    [("200000 100000", 2), ("150000 100000", 2), ("max 100000", 8), ("", 8), ("100000 0", 8)],
)
def test_a_containers_cpu_quota_caps_the_cores(
    monkeypatch: pytest.MonkeyPatch, tmp_path: Path, quota: str, cores: int
) -> None:
    # a container limited to 2 CPUs of an 8-core machine still sees all 8 in its affinity
    monkeypatch.setattr(os, "sched_getaffinity", lambda pid: set(range(8)))
    limit = tmp_path / "cpu.max"
    limit.write_text(quota + "\n")
    monkeypatch.setattr(work, "CPU_QUOTA_FILE", limit)
    assert work.usable_cores() == cores
