"""Generate the demo history of Fernhollow Garden Centres, an invented chain of garden centres.

All numbers here are invented. The script is the known truth the demo's fit is
checked against, so it computes every date itself (Easter from
``dateutil.easter``) and does not use evcal to build the data.

Run ``python evcal/data/demo/generate.py`` to rewrite, next to this file:

* ``fernhollow-history.csv``: ``date,value``, units sold per week, weeks ending Sunday,
  from the week ending 2020-01-05 to the week ending 2026-11-29;
* ``fernhollow-calendar.yaml``: the events, closures, intervention and exclusion, in the
  calendar-file format, including the 2027 dates a plan needs;
* ``truth.json``: the parameters the data were generated with.

How the data are made, per day ``d`` from Monday 2019-12-30 to Sunday 2026-11-29::

    demand(d) = LEVEL * (1 + TREND) ** years(d) * season(d) * weekday(d)
                * (1 + SHIFT if d >= store opening) * prod over events (1 + lift) ** strength
    sales(d)  = demand(d) * STOCKOUT_SHARE during the stock-out, 0 on closure days
    week(w)   = round(sum of sales(d) over the Monday-to-Sunday week * exp(N(0, SIGMA ** 2)))

Events are flat: each lifts every day of its window (``before`` days, the occurrence,
``after`` days) by the same factor. Multiplicative noise is drawn once per week.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import yaml
from dateutil.easter import easter

SEED = 20261201
FIRST_DAY = dt.date(2019, 12, 30)  # Monday: the first day of the week ending 2020-01-05
LAST_DAY = dt.date(2026, 11, 29)  # Sunday: the last week of the history
PLAN_YEAR = 2027
YEARS = range(FIRST_DAY.year, PLAN_YEAR + 1)

# ---------------------------------------------------------------- base (invented)
LEVEL = 400.0  # units per day on 2020-01-01, before season and weekday factors
LEVEL_DATE = dt.date(2020, 1, 1)
TREND = 0.03  # +3 % a year, compounded daily
# log season(d) = A1 cos(2 pi (u - PEAK)) + A2 cos(4 pi (u - PEAK)), u = fraction of the
# year; the second harmonic sharpens the spring peak. Scaled to average 1 over a year.
SEASON_A1 = 0.45
SEASON_A2 = 0.08
SEASON_PEAK = dt.date(2021, 5, 15)  # only the day of year counts: 15 May
# Weekends are busier; the factors average 1. Sunday trading hours are shorter, so Sunday
# is below Saturday.
WEEKDAY = {"mon": 0.90, "tue": 0.88, "wed": 0.88, "thu": 0.92, "fri": 1.02, "sat": 1.30, "sun": 1.10}
SIGMA = 0.03  # lognormal noise on weekly totals

# ---------------------------------------------------------------- known changes (invented)
STORE_OPENING = dt.date(2022, 3, 7)  # a new centre opens: level +12 % from this day on
SHIFT = 0.12
STOCKOUT = (dt.date(2023, 5, 8), dt.date(2023, 5, 28))  # three whole weeks, Monday to Sunday
STOCKOUT_SHARE = 0.40  # sales were 40 % of demand: 60 % of demand lost
STOCKOUT_REASON = "stock-out: peat-free compost shortage, sales about 40 % of demand"

# ---------------------------------------------------------------- the spring sale (invented)
# Explicit dates, different every year; 2024 was a double-discount year (strength 1.5).
SPRING_SALE: list[tuple[dt.date, dt.date, float]] = [
    (dt.date(2020, 4, 24), dt.date(2020, 5, 3), 1.0),
    (dt.date(2021, 5, 6), dt.date(2021, 5, 14), 1.0),
    (dt.date(2022, 4, 28), dt.date(2022, 5, 6), 1.0),
    (dt.date(2023, 4, 21), dt.date(2023, 4, 30), 1.0),
    (dt.date(2024, 5, 9), dt.date(2024, 5, 16), 1.5),
    (dt.date(2025, 4, 30), dt.date(2025, 5, 8), 1.0),
    (dt.date(2026, 5, 14), dt.date(2026, 5, 23), 1.0),
    (dt.date(2027, 4, 29), dt.date(2027, 5, 8), 1.0),  # scheduled: the plan year
]
TOURNAMENT_YEARS = {"every": 4, "start": 2018}
TOURNAMENT_SPAN = ("06-11", "07-11")
TOURNAMENT_MOVED = {2022: (dt.date(2022, 11, 20), dt.date(2022, 12, 18))}
CENTENARY = (dt.date(2027, 6, 18), dt.date(2027, 6, 20))
CENTENARY_ASSUMED = 0.20


@dataclass(frozen=True)
class Event:
    """One invented event: its calendar entry and its true flat lift on window days."""

    name: str
    label: str
    group: str
    lift: float | None  # None: a closure (value exactly 0 on its days)
    occurrences: tuple[tuple[dt.date, dt.date, float], ...]  # (start, end, strength), inclusive
    calendar: dict[str, object]  # the calendar-file keys after name/label/group
    before: int = 0
    after: int = 0

    def window(self, start: dt.date, end: dt.date) -> tuple[dt.date, dt.date]:
        return start - dt.timedelta(days=self.before), end + dt.timedelta(days=self.after)


def _easter_days(offset: int, length: int = 1) -> tuple[tuple[dt.date, dt.date, float], ...]:
    out = []
    for year in YEARS:
        start = easter(year) + dt.timedelta(days=offset)
        out.append((start, start + dt.timedelta(days=length - 1), 1.0))
    return tuple(out)


def _tournament() -> tuple[tuple[dt.date, dt.date, float], ...]:
    out = []
    for year in YEARS:
        if (year - TOURNAMENT_YEARS["start"]) % TOURNAMENT_YEARS["every"]:
            continue
        if year in TOURNAMENT_MOVED:
            start, end = TOURNAMENT_MOVED[year]
        else:
            start = dt.date.fromisoformat(f"{year}-{TOURNAMENT_SPAN[0]}")
            end = dt.date.fromisoformat(f"{year}-{TOURNAMENT_SPAN[1]}")
        out.append((start, end, 1.0))
    return tuple(out)


def events() -> list[Event]:
    """The scenario's events, in calendar-file order."""
    return [
        Event(
            "easter-weekend",
            "Easter weekend, Good Friday to Easter Monday",
            "holiday",
            0.40,
            _easter_days(-2, length=4),
            {"when": {"easter": -2}, "length": 4, "shape": "flat"},
        ),
        Event(
            "mothering-sunday",
            "Mothering Sunday and the six days before",
            "holiday",
            0.25,
            _easter_days(-21),
            {"when": {"easter": -21}, "before": 6, "shape": "flat"},
            before=6,
        ),
        Event(
            "summer-tournament",
            "Summer football tournament (every four years; 2022 moved to winter)",
            "sport",
            0.15,
            _tournament(),
            {
                "when": {"span": {"start": TOURNAMENT_SPAN[0], "end": TOURNAMENT_SPAN[1]}},
                "years": dict(TOURNAMENT_YEARS),
                "moved": {y: {"start": s, "end": e} for y, (s, e) in TOURNAMENT_MOVED.items()},
            },
        ),
        Event(
            "spring-sale",
            "Spring sale (dates set each year)",
            "promotion",
            0.30,
            tuple(SPRING_SALE),
            {"when": {"dates": [_date_entry(s, e, k) for s, e, k in SPRING_SALE]}},
        ),
        Event(
            "centenary-weekend",
            "Centenary weekend, new in 2027: no history, lift assumed",
            "promotion",
            0.0,  # its only occurrence is in 2027, after the history: adds nothing to the data
            ((CENTENARY[0], CENTENARY[1], 1.0),),
            {
                "when": {"dates": [_date_entry(CENTENARY[0], CENTENARY[1], 1.0)]},
                "effect": {"assume": f"{CENTENARY_ASSUMED * 100:g}%"},
            },
        ),
        Event(
            "christmas-closure",
            "All centres closed on Christmas Day",
            "closure",
            None,
            tuple((dt.date(y, 12, 25), dt.date(y, 12, 25), 1.0) for y in YEARS),
            {"when": {"fixed": "12-25"}, "effect": "zero"},
        ),
        Event(
            "easter-sunday-closure",
            "All centres closed on Easter Sunday",
            "closure",
            None,
            _easter_days(0),
            {"when": {"easter": 0}, "effect": "zero"},
        ),
    ]


def _date_entry(start: dt.date, end: dt.date, strength: float) -> dict[str, object]:
    entry: dict[str, object] = {"start": start, "end": end}
    if strength != 1.0:
        entry["strength"] = strength
    return entry


# ---------------------------------------------------------------- simulation


def season(days: pd.DatetimeIndex) -> np.ndarray:
    """The smooth annual shape, mean 1 over a year, peak on 15 May."""

    def raw(u: np.ndarray) -> np.ndarray:
        peak = (SEASON_PEAK.timetuple().tm_yday - 1) / 365.0
        angle = 2 * np.pi * (u - peak)
        return np.exp(SEASON_A1 * np.cos(angle) + SEASON_A2 * np.cos(2 * angle))

    u = (days.day_of_year.to_numpy() - 1) / np.where(days.is_leap_year, 366.0, 365.0)
    grid = (np.arange(100_000) + 0.5) / 100_000
    return raw(u) / raw(grid).mean()


def simulate(seed: int = SEED) -> tuple[pd.DataFrame, pd.Series]:
    """Daily demand and sales (noise-free) and the noisy weekly totals.

    Returns
    -------
    daily : DataFrame
        Indexed by day: ``base`` (trend x season x weekday, no event, no shift),
        ``demand`` (with shift and event lifts), ``sales`` (after the stock-out and
        closures), and one multiplier column per lifting event.
    weekly : Series
        Integer units sold per week, indexed by week-ending Sunday.
    """
    days = pd.date_range(FIRST_DAY, LAST_DAY, freq="D")
    years = (days - pd.Timestamp(LEVEL_DATE)).days.to_numpy() / 365.25
    weekday = np.array(list(WEEKDAY.values()))[days.day_of_week.to_numpy()]
    base = LEVEL * (1.0 + TREND) ** years * season(days) * weekday
    daily = pd.DataFrame({"base": base}, index=pd.DatetimeIndex(days, name="date"))

    demand = base * np.where(days >= pd.Timestamp(STORE_OPENING), 1.0 + SHIFT, 1.0)
    closed = np.zeros(len(days), dtype=bool)
    for event in events():
        on = np.ones(len(days))
        for start, end, strength in event.occurrences:
            lo, hi = event.window(start, end)
            mask = (days >= pd.Timestamp(lo)) & (days <= pd.Timestamp(hi))
            if event.lift is None:
                closed |= mask
            else:
                on[mask] *= (1.0 + event.lift) ** strength
        if event.lift is not None:
            daily[f"x:{event.name}"] = on
            demand = demand * on
    daily["demand"] = demand
    stockout = (days >= pd.Timestamp(STOCKOUT[0])) & (days <= pd.Timestamp(STOCKOUT[1]))
    daily["sales"] = np.where(closed, 0.0, demand * np.where(stockout, STOCKOUT_SHARE, 1.0))
    daily["closed"] = closed
    daily["stockout"] = stockout

    totals = daily["sales"].resample("W-SUN").sum()
    rng = np.random.default_rng(seed)
    noise = np.exp(rng.normal(0.0, SIGMA, size=len(totals)))
    weekly = pd.Series(np.rint(totals.to_numpy() * noise).astype(np.int64), index=totals.index)
    weekly.index.name = "date"
    return daily, weekly


# ---------------------------------------------------------------- files


def history_csv(weekly: pd.Series) -> str:
    lines = ["date,value"] + [f"{d.date().isoformat()},{v}" for d, v in weekly.items()]
    return "\n".join(lines) + "\n"


def _flow(value: object) -> str:
    """A YAML flow-style rendering of one small value (dates stay unquoted ISO)."""
    if isinstance(value, dict):
        return "{" + ", ".join(f"{k}: {_flow(v)}" for k, v in value.items()) + "}"
    if isinstance(value, dt.date):
        return value.isoformat()
    if isinstance(value, str):
        needs_quotes = ":" in value or (value[:1].isdigit() and not value.endswith("%"))
        return json.dumps(value) if needs_quotes else value
    return str(value)


def calendar_yaml() -> str:
    out = [
        "# Fernhollow Garden Centres: an INVENTED chain of garden centres (demo data).",
        "# Written by evcal/data/demo/generate.py; the true lifts behind the history are in truth.json.",
        "name: Fernhollow Garden Centres (invented demo)",
        "events:",
    ]
    for event in events():
        out += [f"  - name: {event.name}", f"    label: {json.dumps(event.label)}"]
        out.append(f"    group: {event.group}")
        for key, value in event.calendar.items():
            if key == "when" and isinstance(value, dict) and "dates" in value:
                out.append("    when:")
                out.append("      dates:")
                out += [f"        - {_flow(entry)}" for entry in value["dates"]]  # type: ignore[union-attr]
            elif key == "moved":
                out.append("    moved:")
                out += [f"      {year}: {_flow(span)}" for year, span in value.items()]  # type: ignore[union-attr]
            else:
                out.append(f"    {key}: {_flow(value)}")
    out += [
        "interventions:",
        f"  - {{name: new-store-opening, type: level_shift, start: {STORE_OPENING.isoformat()}}}",
        "exclude:",
        f"  - {{start: {STOCKOUT[0].isoformat()}, end: {STOCKOUT[1].isoformat()}, "
        f"reason: {json.dumps(STOCKOUT_REASON)}}}",
    ]
    return "\n".join(out) + "\n"


def truth(daily: pd.DataFrame, weekly: pd.Series) -> dict[str, object]:
    """The true parameters, and what each past occurrence added (noise-free units)."""
    events_out: dict[str, object] = {}
    closures: dict[str, list[str]] = {}
    assumed: dict[str, object] = {}
    for event in events():
        in_history = [
            o
            for o in event.occurrences
            if event.window(o[0], o[1])[0] <= LAST_DAY and event.window(o[0], o[1])[1] >= FIRST_DAY
        ]
        if event.lift is None:
            closures[event.name] = [s.isoformat() for s, _, _ in in_history]
            continue
        if event.calendar.get("effect") is not None:
            assumed[event.name] = {
                "assume_pct": CENTENARY_ASSUMED * 100,
                "occurrences": [
                    {"start": s.isoformat(), "end": e.isoformat()} for s, e, _ in event.occurrences
                ],
                "note": "no occurrence in the history; the generator adds nothing for it",
            }
            continue
        rows = []
        factor = daily[f"x:{event.name}"]
        without = daily["sales"] / factor  # sales had this event not happened
        added = daily["sales"] - without
        demand_without = daily["demand"] / factor  # closed days keep their demand here
        for start, end, strength in in_history:
            lo, hi = event.window(start, end)
            span = slice(pd.Timestamp(lo), pd.Timestamp(hi))
            added_units = float(added.loc[span].sum())
            open_days = int((~daily["closed"].loc[span]).sum())
            rows.append(
                {
                    "start": start.isoformat(),
                    "end": end.isoformat(),
                    "window_start": lo.isoformat(),
                    "window_end": hi.isoformat(),
                    "window_days": (hi - lo).days + 1,
                    "strength": strength,
                    "lift_pct": round(((1 + event.lift) ** strength - 1) * 100, 4),
                    "open_window_days": open_days,
                    "added_units": round(added_units, 1),
                    # added units over the no-event demand of every window day, closed ones too
                    "added_pct_all_window_days": round(
                        100 * added_units / float(demand_without.loc[span].sum()), 2
                    ),
                }
            )
        events_out[event.name] = {
            "lift_pct": event.lift * 100,
            "shape": "flat",
            "before": event.before,
            "after": event.after,
            # The same lift as a share of the no-event demand on every window day, closed days
            # included (what a model that spreads the event over its whole window reports).
            "lift_pct_all_window_days": float(
                np.median([r["added_pct_all_window_days"] for r in rows if r["strength"] == 1.0])
            ),
            "occurrences": rows,
        }
    stock = daily.loc[daily["stockout"]]
    lost = float((stock["demand"] - stock["sales"]).sum())
    return {
        "scenario": "Fernhollow Garden Centres: an invented chain of garden centres. All data are invented.",
        "seed": SEED,
        "generator": "evcal/data/demo/generate.py",
        "history": {
            "file": "fernhollow-history.csv",
            "frequency": "weekly, weeks ending Sunday (W-SUN)",
            "first_week_ending": weekly.index[0].date().isoformat(),
            "last_week_ending": weekly.index[-1].date().isoformat(),
            "weeks": len(weekly),
            "units": "units sold per week (integers)",
        },
        "formula": (
            "Daily demand = level x (1 + trend)^years x season(day of year) x weekday factor "
            "x (1 + level shift after the store opening) x product over events of "
            "(1 + lift)^strength on each day of the event's window (flat). Daily sales = demand, "
            "times the stock-out share during the stock-out, and exactly 0 on closure days "
            "(Christmas Day, Easter Sunday). Weekly value = round(sum of daily sales over the "
            "Monday-to-Sunday week x exp(e)), e ~ Normal(0, sigma^2) drawn once per week with "
            "numpy default_rng(seed). Lifts are on open window days: the closed Easter Sunday "
            "inside the Easter weekend adds nothing."
        ),
        "base": {
            "level_units_per_day": LEVEL,
            "level_date": LEVEL_DATE.isoformat(),
            "trend_pct_per_year": TREND * 100,
            "season": {
                "log_shape": "a1 cos(2 pi (u - peak)) + a2 cos(4 pi (u - peak)), u = fraction of year",
                "a1": SEASON_A1,
                "a2": SEASON_A2,
                "peak": "05-15",
                "scaled": "mean 1 over a year",
            },
            "weekday_factors": WEEKDAY,
        },
        "noise": {"kind": "lognormal, on weekly totals", "sigma": SIGMA},
        "events": events_out,
        "closures": closures,
        "assumed": assumed,
        "interventions": {
            "new-store-opening": {
                "type": "level_shift",
                "start": STORE_OPENING.isoformat(),
                "lift_pct": SHIFT * 100,
            }
        },
        "exclusions": [
            {
                "start": STOCKOUT[0].isoformat(),
                "end": STOCKOUT[1].isoformat(),
                "reason": STOCKOUT_REASON,
                "sales_share_of_demand": STOCKOUT_SHARE,
                "lost_fraction": round(1 - STOCKOUT_SHARE, 4),
                "lost_units": round(lost, 1),
            }
        ],
    }


def write(out: Path, seed: int = SEED) -> list[Path]:
    """Generate and write the three demo files into ``out``; return their paths."""
    daily, weekly = simulate(seed)
    texts = {
        "fernhollow-history.csv": history_csv(weekly),
        "fernhollow-calendar.yaml": calendar_yaml(),
        "truth.json": json.dumps(truth(daily, weekly), indent=2) + "\n",
    }
    yaml.safe_load(texts["fernhollow-calendar.yaml"])  # fail here, not in the demo, if malformed
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    from evcal._files import atomic_path  # only for writing: the data never touch evcal

    out.mkdir(parents=True, exist_ok=True)
    paths = []
    for name, text in texts.items():
        with atomic_path(out / name) as tmp:
            tmp.write_bytes(text.encode("utf-8"))
        paths.append(out / name)
    return paths


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=Path(__file__).resolve().parent, help="output folder")
    args = parser.parse_args(argv)
    for path in write(args.out):
        print(f"wrote {path}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
