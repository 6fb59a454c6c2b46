"""Forked worker processes that share the passes of one analysis.

One mechanism serves the pass over the capture (stretches of blocks) and the
burst regions: the parent stores a function and its context in a module
global, forks the workers (which inherit both), hands out small task tuples
and collects the results in task order, so results do not depend on how many
workers ran.  Warnings a worker raises come back with its result and are
raised again in the parent.
"""

from __future__ import annotations

import warnings
from typing import Callable, Iterable, Iterator

import numpy as np

from ..errors import CaptureWarning, warn
from ._heap import release_freed_memory

__all__ = ["default_workers", "can_fork", "fork_workers", "fork_map", "shared_zeros"]

#: ``(function, context)``, set in the parent just before the workers are forked; they inherit it.
_FORKED: tuple | None = None


def default_workers() -> int:
    """Processes for an analysis: the cores this process may run on."""
    import os

    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:          # not on Linux
        return max(1, os.cpu_count() or 1)


def can_fork() -> bool:
    """Whether worker processes may be forked from this process now."""
    import multiprocessing
    import threading

    # forking copies only the calling thread: with other threads alive (a
    # progress bar refreshing itself, a host application) a lock they hold
    # would stay held in the child, so the analysis then stays in this process
    return "fork" in multiprocessing.get_all_start_methods() and threading.active_count() == 1


def fork_workers(workers: int | None) -> int:
    """Worker processes to fork (``None``: every core): 1 where forking is not possible or not safe."""
    n = default_workers() if workers is None else int(workers)
    return n if n > 1 and can_fork() else 1


def _call(task):
    """One task in a worker: its result and the warnings it raised."""
    fn, ctx = _FORKED
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", CaptureWarning)
        out = fn(ctx, *task)
    return out, [str(w.message) for w in caught if issubclass(w.category, CaptureWarning)]


def fork_map(fn: Callable, ctx, tasks: Iterable[tuple], workers: int,
             alongside: Callable[[], bool] | None = None) -> Iterator:
    """Yield ``fn(ctx, *task)`` for each task, in task order.

    With ``workers`` > 1 the tasks run in that many forked processes (the
    caller has checked :func:`fork_workers`); otherwise here.  ``fn`` must be
    a module-level function.  An exception in a task is raised here.

    ``alongside``, if given, is work for this process while the workers run:
    it is called again and again (one step each time, returning True while
    more is left) whenever the next result is not ready, and run to its end
    before the last result is yielded (in this process, after the tasks, when
    nothing is forked).
    """
    global _FORKED
    tasks = list(tasks)
    more = alongside is not None
    if workers <= 1 or len(tasks) <= 1:
        for i, t in enumerate(tasks):
            out = fn(ctx, *t)
            while more and i == len(tasks) - 1:
                more = alongside()
            yield out
        while more:
            more = alongside()
        return
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    _FORKED = (fn, ctx)
    # a child reusing the parent's free heap blocks would copy each page it touched
    release_freed_memory()
    try:
        with ProcessPoolExecutor(max_workers=min(workers, len(tasks)),
                                 mp_context=multiprocessing.get_context("fork")) as pool:
            futures = [pool.submit(_call, t) for t in tasks]
            try:
                for i, fut in enumerate(futures):
                    while more and (i == len(futures) - 1 or not fut.done()):
                        more = alongside()
                    out, messages = fut.result()
                    for m in messages:
                        warn(m)
                    yield out
            except BaseException:               # as Executor.map: tasks not started are dropped
                for fut in futures:
                    fut.cancel()
                raise
    finally:
        _FORKED = None


def shared_zeros(n: int, dtypes) -> list:
    """Arrays of ``n`` zeros, one per dtype, in one anonymous shared mapping.

    Workers forked afterwards write into the same memory the parent reads, so
    results written there need not be sent back.  The arrays keep the mapping
    alive; it is released with the last of them.
    """
    import mmap

    sizes = [int(n) * np.dtype(t).itemsize for t in dtypes]
    if sum(sizes) == 0:
        return [np.zeros(int(n), dtype=t) for t in dtypes]
    buf = mmap.mmap(-1, sum(sizes))            # anonymous, shared with children; zero-filled
    out, offset = [], 0
    for t, size in zip(dtypes, sizes):
        out.append(np.frombuffer(buf, dtype=t, count=int(n), offset=offset))
        offset += size
    return out
