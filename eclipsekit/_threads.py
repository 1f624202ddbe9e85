"""One BLAS thread inside the analysis, so that results repeat to the last digit.

A threaded BLAS splits a reduction (a dot product, a matrix product) among its threads
in an order that depends on what else is running: the period search calls numpy from
two threads at once, and on a loaded machine the same analysis then differed in the
sixth digit between runs (measured; with one BLAS thread it repeats exactly).  The
arrays here are small, so one thread costs nothing measurable; the period search keeps
both cores busy with its own thread pool.
"""

from __future__ import annotations

import functools
from typing import Any, Callable, TypeVar

F = TypeVar("F", bound=Callable[..., Any])


def one_blas_thread(func: F) -> F:
    """Run ``func`` with the BLAS libraries limited to one thread (threadpoolctl)."""

    @functools.wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        from threadpoolctl import threadpool_limits

        with threadpool_limits(limits=1, user_api="blas"):
            return func(*args, **kwargs)

    return wrapper  # type: ignore[return-value]
