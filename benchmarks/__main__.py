"""Run the benchmarks: ``python -m benchmarks [NAME ...]``.

Each ``benchmarks/bench_<name>.py`` module has a ``main()`` that times Kinfill and
its reference side by side in one run and prints ratios, so results compare on any
machine. Speed goals are checked here, not in the test suite.
"""

from __future__ import annotations

import importlib
import pkgutil
import sys
import time

import benchmarks


def main(argv: list[str]) -> int:
    names = sorted(m.name for m in pkgutil.iter_modules(benchmarks.__path__) if m.name.startswith("bench_"))
    wanted = [n if n.startswith("bench_") else f"bench_{n}" for n in argv] or names
    unknown = sorted(set(wanted) - set(names))
    if unknown:
        print(f"unknown benchmark(s): {', '.join(unknown)}; known: {', '.join(names)}")
        return 2
    if not wanted:
        print("no benchmarks yet")
        return 0
    for name in wanted:
        print(f"== {name}", flush=True)
        start = time.perf_counter()
        importlib.import_module(f"benchmarks.{name}").main()
        print(f"   ({time.perf_counter() - start:.1f} s)\n", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
