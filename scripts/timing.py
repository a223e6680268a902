"""Timing helpers shared by the benchmark scripts (imported by them, importing none)."""

from __future__ import annotations

import time
from collections.abc import Callable


def best_with_result(fn: Callable[[], object], repeat: int = 3) -> tuple[float, object]:
    """Smallest wall time of ``repeat`` calls, in seconds, and the last call's result."""
    best, out = float("inf"), None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t)
    return best, out


def best_of(fn: Callable[[], object], repeat: int = 3) -> float:
    """Smallest wall time of ``repeat`` calls, in seconds."""
    return best_with_result(fn, repeat)[0]


def best_of_each(fns: list[Callable[[], object]], repeat: int = 5) -> list[float]:
    """Smallest wall time of each function over ``repeat`` rounds that call them in
    turn, so a slow spell on a shared machine falls on every side alike."""
    times = [[] for _ in fns]
    for _ in range(repeat):
        for fn, t in zip(fns, times, strict=True):
            t.append(best_of(fn, 1))
    return [min(t) for t in times]


def row(label: str, ours: float, ref: float, unit: str = "s") -> None:
    """Print one comparison: both times and the ratio reference / interp."""
    print(
        f"  {label:<44} interp {ours:9.4f} {unit}   reference {ref:9.4f} {unit}   "
        f"ratio {ref / ours:7.2f}"
    )
