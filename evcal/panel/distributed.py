"""Where the units of work run: here, or on a Dask cluster; with a progress bar over series.

``--workers N`` starts a local ``dask.distributed.LocalCluster`` (N worker
processes, one thread each: the numerical work releases the GIL but one BLAS
thread per process avoids oversubscribing the cores); ``--scheduler ADDRESS``
connects to a running cluster (``tcp://host:8786``). Each unit (a block of
series of one design group, or a few series of the per-series path) is one
task. The units are cut the same way whatever runs them and their results are
put back in unit order, so the output does not depend on the number of
workers. Dask is imported only when asked for (``pip install evcal[dask]``).
"""

from __future__ import annotations

import contextlib
import os
from collections.abc import Callable, Iterator
from typing import Any

from evcal.errors import EvcalError
from evcal.progress import progress_bar, progress_enabled

__all__ = ["make_runner"]


#: units submitted beyond the running ones (local threads): enough to keep the threads busy
UNITS_AHEAD = 2


def local_threads() -> int:
    """Threads for the units in this process: the cores this process may use, at most 4."""
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        cores = os.cpu_count() or 1
    return max(1, min(4, cores))


def local_runner(progress: bool = False, threads: int | None = None, label: str = "fitting series"
                 ) -> Callable[[list[Any], Callable[[Any], Any]], Iterator[Any]]:
    """Run the units in this process, on a few threads (numpy releases the GIL in the heavy steps).

    BLAS is held to one thread per unit meanwhile: the matrices are small, and
    threads inside threads only fight over the cores.
    """
    n_threads = threads or local_threads()

    def run(units: list[Any], fn: Callable[[Any], Any]) -> Iterator[Any]:
        from concurrent.futures import FIRST_COMPLETED, Future, ThreadPoolExecutor, wait

        from threadpoolctl import threadpool_limits

        total = sum(len(u.sids) for u in units)
        with progress_bar(total, progress, label) as advance, threadpool_limits(limits=1):
            if n_threads == 1 or len(units) <= 1:
                for u in units:
                    yield fn(u)
                    advance(len(u.sids))
                return
            # a few units ahead of the threads, not all of them: when the caller is slower than
            # the threads (writing the fitted rows), finished units wait here in bounded number
            # instead of all piling up in memory
            todo = iter(units)
            running: dict[Future[Any], Any] = {}

            def submit_next() -> None:
                u = next(todo, None)
                if u is not None:
                    running[pool.submit(fn, u)] = u

            with ThreadPoolExecutor(max_workers=n_threads) as pool:
                for _ in range(n_threads + UNITS_AHEAD):
                    submit_next()
                while running:
                    done, _ = wait(running, return_when=FIRST_COMPLETED)
                    for fut in sorted(done, key=lambda f: running[f].index):
                        u = running.pop(fut)
                        submit_next()
                        yield fut.result()
                        advance(len(u.sids))

    return run


def dask_runner(workers: int | None = None, scheduler: str | None = None, progress: bool = False,
                label: str = "fitting series") -> Callable[[list[Any], Callable[[Any], Any]], Iterator[Any]]:
    """Run the units as Dask tasks on a local cluster (``workers``) or an existing one (``scheduler``)."""
    try:
        from dask.distributed import Client, LocalCluster, as_completed
    except ImportError:
        raise EvcalError("--workers/--scheduler need dask.distributed: pip install 'evcal[dask]'") from None

    def run(units: list[Any], fn: Callable[[Any], Any]) -> Iterator[Any]:
        with contextlib.ExitStack() as stack:
            if scheduler:
                try:
                    client = stack.enter_context(Client(scheduler, timeout="10s"))
                except (OSError, TimeoutError) as err:
                    raise EvcalError(f"--scheduler {scheduler}: cannot connect ({type(err).__name__}: "
                                     f"{err}); start the scheduler first (dask scheduler) or check the "
                                     "address") from None
            else:
                cluster = stack.enter_context(LocalCluster(
                    n_workers=int(workers or 1), threads_per_worker=1, processes=True,
                    dashboard_address=None, silence_logs=40,
                    env={"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}))
                client = stack.enter_context(Client(cluster))
            if not units:
                return
            # inputs shared by many units (a design group's factorised design) go to each worker once
            scattered: dict[int, Any] = {}
            futures = []
            for u in units:
                shared = getattr(u, "shared", None)
                if shared is None:
                    futures.append(client.submit(fn, u, pure=False))
                    continue
                if id(shared) not in scattered:
                    scattered[id(shared)] = client.scatter(shared, broadcast=True, hash=False)
                futures.append(client.submit(_with_shared, fn, u.without_shared(), scattered[id(shared)],
                                             pure=False))
            with progress_bar(sum(len(u.sids) for u in units), progress, label) as advance:
                for fut in as_completed(futures):
                    result = fut.result()
                    advance(len(units[result.index].sids))
                    yield result
                    fut.release()

    return run


def _with_shared(fn: Callable[[Any], Any], unit: Any, shared: Any) -> Any:
    return fn(unit.with_shared(shared))


def make_runner(workers: int | None = None, scheduler: str | None = None, progress: bool | None = None
                ) -> Callable[[list[Any], Callable[[Any], Any]], Iterator[Any]]:
    """The runner for the options: Dask when ``workers`` or ``scheduler`` is given, else this process."""
    show = progress_enabled(progress)
    if workers is not None and workers < 1:
        raise EvcalError(f"--workers {workers}: give 1 or more worker processes")
    if workers is not None and scheduler:
        raise EvcalError("give either --workers (start a local cluster) or --scheduler (use a running one)")
    if workers or scheduler:
        return dask_runner(workers, scheduler, show)
    return local_runner(show)
