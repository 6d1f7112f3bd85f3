"""Run independent whole forecasts in parallel across CPU cores."""

import multiprocessing
import os
from collections.abc import Callable, Sequence
from concurrent.futures import ProcessPoolExecutor
from typing import TypeVar

T = TypeVar("T")
R = TypeVar("R")


def map_in_processes(function: Callable[[T], R], items: Sequence[T]) -> list[R]:
    """``[function(i) for i in items]``, spread over the CPU cores (forked workers)."""
    workers = min(len(items), os.cpu_count() or 1)
    if workers <= 1:
        return [function(item) for item in items]
    context = multiprocessing.get_context("fork")
    with ProcessPoolExecutor(max_workers=workers, mp_context=context) as pool:
        return list(pool.map(function, items))
