"""Benchmarks, run by ``make bench`` (``python -m bench``).

Every module ``bench/<name>.py`` (not starting with ``_``) that defines
``run() -> list[str]`` is found and run by ``bench/__main__.py``; its lines
are printed under its name. ``python -m bench core_solve`` runs one module.
Each module measures its contenders side by side in one run and prints the
ratios, so the numbers compare like with like on whatever machine runs them.
"""

from __future__ import annotations

import statistics
import time
from typing import Callable


def median_seconds(work: Callable[[], object], repeat: int = 7, warmup: int = 1) -> float:
    """Median wall time of ``work()`` over ``repeat`` runs, after ``warmup`` untimed runs."""
    for _ in range(warmup):
        work()
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        work()
        times.append(time.perf_counter() - start)
    return statistics.median(times)
