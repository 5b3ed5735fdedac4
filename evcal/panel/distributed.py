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
from evcal.spelling import option

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


#: modules every unit's function imports: loaded in each worker while the cluster starts (not in
#: the first unit, where each worker paid about a second for them)
WORKER_IMPORTS = ("evcal.engine.run", "evcal.engine.units", "evcal.engine.refine", "evcal.effects.block",
                  "evcal.effects.occurrences", "evcal.plan.batched", "evcal.panel.planning")


class DaskRunner:
    """Run the units as Dask tasks on a local cluster (``workers``) or an existing one (``scheduler``).

    The cluster is started (or connected to) on a background thread as soon as
    the runner is made, and each worker imports the fitting modules meanwhile,
    so the start-up overlaps the reading of the file. One cluster serves every
    call (the blocks, then the series refitted alone); :meth:`close` (or the
    ``with`` block) shuts it down and waits for its worker processes to end.
    """

    def __init__(self, workers: int | None = None, scheduler: str | None = None, progress: bool = False,
                 label: str = "fitting series") -> None:
        from concurrent.futures import ThreadPoolExecutor

        try:
            import dask.distributed  # noqa: F401
        except ImportError:
            raise EvcalError(f"{option('workers')}/{option('scheduler')} need dask.distributed: "
                             "pip install 'evcal[dask]'") \
                from None
        self.workers, self.scheduler, self.progress, self.label = workers, scheduler, progress, label
        self._stack = contextlib.ExitStack()
        self._closing: Any = None
        self._pool = ThreadPoolExecutor(max_workers=1)
        self._client = self._pool.submit(self._start)

    def _start(self) -> Any:
        from dask.distributed import Client, LocalCluster

        if self.scheduler:
            try:
                client = self._stack.enter_context(Client(self.scheduler, timeout="10s"))
            except (OSError, TimeoutError) as err:
                named = option("scheduler", self.scheduler, cli_value=self.scheduler)
                raise EvcalError(f"{named}: cannot connect ({type(err).__name__}: "
                                 f"{err}); start the scheduler first (dask scheduler) or check the "
                                 "address") from None
        else:
            import dask

            # Dask's nannies start each worker with MALLOC_TRIM_THRESHOLD_=65536, so the C library hands
            # every freed block back to the system and each fresh array pays its page faults again: a
            # block of 500 series took 2.0 s of CPU in a worker against 0.7 s here. The workers keep the
            # C library's own (adaptive) threshold, as this process does; evcal.engine.memory trims.
            with dask.config.set({"distributed.nanny.pre-spawn-environ.MALLOC_TRIM_THRESHOLD_": None}):
                cluster = self._stack.enter_context(LocalCluster(
                    n_workers=int(self.workers or 1), threads_per_worker=1, processes=True,
                    dashboard_address=None, silence_logs=40,
                    env={"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}))
            client = self._stack.enter_context(Client(cluster))
        client.run(_import_modules, WORKER_IMPORTS)
        return client

    def __enter__(self) -> DaskRunner:
        return self

    def __exit__(self, *exc: Any) -> None:
        self.close()

    def release(self) -> None:
        """Start shutting the cluster down in the background (the work is done; the caller writes)."""
        if self._closing is None:
            self._closing = self._pool.submit(self._stop)

    def _stop(self) -> None:
        with contextlib.suppress(Exception):  # a start that failed has nothing to close; its error was raised
            self._client.result()
        self._stack.close()
        if not self.scheduler:
            # the worker processes were started through multiprocessing, whose resource tracker (a
            # process of its own) would otherwise outlive the command and be left as a zombie until
            # the system reaps it; stopping it here waits for it (multiprocessing restarts it if needed)
            from multiprocessing import resource_tracker

            stop = getattr(getattr(resource_tracker, "_resource_tracker", None), "_stop", None)
            if stop is not None:
                stop()

    def close(self) -> None:
        """Shut the cluster down; a local one's worker processes have ended when this returns."""
        self.release()
        self._closing.result()
        self._pool.shutdown()

    def __call__(self, units: list[Any], fn: Callable[[Any], Any]) -> Iterator[Any]:
        from dask.distributed import as_completed

        client = self._client.result()
        if not units:
            return
        # inputs shared by many units (a design group's factorised design) go once to the cluster, and
        # from there to the workers that need them (a broadcast to every worker cost more than it saved)
        scattered: dict[int, Any] = {}
        futures = []
        for u in units:
            shared = getattr(u, "shared", None)
            if shared is None:
                futures.append(client.submit(fn, u, pure=False))
                continue
            if id(shared) not in scattered:
                scattered[id(shared)] = client.scatter(shared, hash=False)
            futures.append(client.submit(_with_shared, fn, u.without_shared(), scattered[id(shared)],
                                         pure=False))
        with progress_bar(sum(len(u.sids) for u in units), self.progress, self.label) as advance:
            for fut in as_completed(futures):
                result = fut.result()
                advance(len(units[result.index].sids))
                yield result
                fut.release()


def _import_modules(names: tuple[str, ...]) -> None:
    import importlib

    for name in names:
        importlib.import_module(name)


def _with_shared(fn: Callable[[Any], Any], unit: Any, shared: Any) -> Any:
    return fn(unit.with_shared(shared))


class _Local:
    """:func:`local_runner` with the runners' ``with`` block (nothing to shut down)."""

    def __init__(self, run: Callable[[list[Any], Callable[[Any], Any]], Iterator[Any]]) -> None:
        self.run = run

    def __call__(self, units: list[Any], fn: Callable[[Any], Any]) -> Iterator[Any]:
        return self.run(units, fn)

    def __enter__(self) -> _Local:
        return self

    def __exit__(self, *exc: Any) -> None:
        return None

    def release(self) -> None:
        return None

    def close(self) -> None:
        return None


def make_runner(workers: int | None = None, scheduler: str | None = None, progress: bool | None = None
                ) -> DaskRunner | _Local:
    """The runner for the options: Dask when ``workers`` or ``scheduler`` is given, else this process.

    Use it in a ``with`` block: a Dask cluster starts at once (in the background) and is shut down,
    its worker processes ended, when the block ends.
    """
    show = progress_enabled(progress)
    if workers is not None and workers < 1:
        raise EvcalError(f"{option('workers', workers)}: give 1 or more worker processes")
    if workers is not None and scheduler:
        raise EvcalError(f"give either {option('workers')} (start a local cluster) or {option('scheduler')} "
                         "(use a running one)")
    if workers or scheduler:
        return DaskRunner(workers, scheduler, show)
    return _Local(local_runner(show))
