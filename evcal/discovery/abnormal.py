"""Years whose residuals depart strongly from the model.

For each calendar year with at least half its periods in the fit, two tests
on the model's residuals (model scale, e.g. log):

* ``level``: does the year's mean residual differ from the other years'?
  ``z = (mean_y - mean_others) / sqrt(s^2 v / m)``: ``s^2`` the pooled
  within-year variance of the *other* years (so the tested year cannot hide
  itself), ``m`` the year's periods, ``v = (1 + r) / (1 - r)`` the long-run
  variance factor of an AR(1) with the residuals' lag-1 autocorrelation ``r``
  (clipped to 0..0.9), because autocorrelated residuals make a year's mean
  vary more than white noise does.
* ``spread``: is the year erratic? Its within-year variance over ``s^2``,
  against the chi-square law with ``(m - 1)(1 - r^2)/(1 + r^2)`` degrees of
  freedom (Bartlett's effective number for an AR(1)), upper tail only.

As ``s^2`` is itself estimated, ``z`` is read against Student's t and the
variance ratio against Fisher's F, with the other years' (effective)
degrees of freedom.

A level departure must also stand out **between** years: the year's mean
against the other years' means, ``(mean_y - mean(others)) / (sd(others)
sqrt(1 + 1/k'))`` with ``k'`` other years, read against Student's t with
``k' - 1`` degrees of freedom (the prediction interval of one more yearly
mean). Residuals whose level wanders slowly (a drifting level the model's
trend does not follow) make every year's mean differ from the rest by many
within-year standard errors; the years' own spread says that this much
wandering is usual. On daily US births 1969-1983 the within-year test alone
flagged 12 of 15 years, on 26 years of weekly US gasoline 14.

A year is flagged when a p-value is below ``0.01 / years`` (Bonferroni: about
a 1 % chance per test that a series with no abnormal year shows one), and
reported as a normal quantile (``z``). A robust z-score across the yearly
means flagged a year in about one noise series in five with the 5 to 10
years of a typical history (measured). A ``spread`` year only suggests an
exclusion: a level term cannot absorb erratic periods.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.stats import f as f_dist
from scipy.stats import norm
from scipy.stats import t as t_dist

__all__ = ["AbnormalYear", "abnormal_years", "exclusion_advice", "FAMILY_ALPHA", "MAX_EXCLUDED_SHARE",
           "MIN_YEARS", "OVERWHELMING_P"]

#: family-wise false-alarm rate per test and series (Bonferroni over years)
FAMILY_ALPHA = 0.01
MIN_YEARS = 3
#: a year counts when at least this share of its periods are in the fit
MIN_SHARE = 0.5
#: a year is erratic only when its residual sd is at least this many times the
#: other years' (a 20 % wider spread in a year of 365 days is significant but
#: no reason to drop the year; common practice, no source)
MIN_SPREAD_RATIO = 1.5
#: at most this share of the history's years is suggested for exclusion
#: (common practice, no source: beyond it the model, not the years, is off)
MAX_EXCLUDED_SHARE = 0.2
#: p-value below which a year is excluded even where the rules above say not
#: (the latest year, or beyond the share): about 5 standard errors; common
#: practice, no source
OVERWHELMING_P = 1e-6


@dataclass(frozen=True)
class AbnormalYear:
    """One flagged year: which test, the year's statistic and its z."""

    year: int
    kind: str  # "level" (value = mean residual) or "spread" (value = sd / sigma)
    value: float
    z: float
    start: pd.Timestamp
    end: pd.Timestamp
    #: the between-year p-value of a level departure (the within-year p for spread)
    p_value: float = float("nan")


def abnormal_years(residuals: pd.Series) -> list[AbnormalYear]:
    """Flag years whose residual level or spread departs from the model.

    Parameters
    ----------
    residuals : Series
        Model-scale residuals on a PeriodIndex; NaN for periods not in the fit.

    Returns
    -------
    list of AbnormalYear
        Sorted by year; a year can appear twice (level and spread).

    Examples
    --------
    >>> idx = pd.period_range("2018-01", "2023-12", freq="M")
    >>> r = pd.Series(np.random.default_rng(0).normal(0, 0.05, len(idx)), index=idx)
    >>> r[idx.year == 2020] -= 0.3
    >>> [(a.year, a.kind) for a in abnormal_years(r)]  # doctest: +NORMALIZE_WHITESPACE
    [(2020, 'level')]
    """
    if not isinstance(residuals.index, pd.PeriodIndex):
        raise TypeError("residuals need a PeriodIndex")
    periods = residuals.index
    years = np.asarray(periods.start_time.year)
    r = residuals.to_numpy(dtype=float)
    frame = pd.DataFrame({"r": r, "year": years})
    counts = frame.groupby("year")["r"].count()
    full = int(pd.Series(years).value_counts().max())
    ok = [int(y) for y, c in counts.items() if c >= max(3, MIN_SHARE * full)]
    if len(ok) < MIN_YEARS:
        return []
    dev = r - frame.groupby("year")["r"].transform("mean").to_numpy()
    rho = _lag1(r)
    inflation = (1 + rho) / (1 - rho)
    # Bartlett's approximation: under AR(1) a sample variance has the spread of
    # one from (1 - rho^2) / (1 + rho^2) times as many independent values
    df_factor = (1 - rho**2) / (1 + rho**2)
    cut = FAMILY_ALPHA / len(ok)
    yearly = frame[np.isin(years, ok)].groupby("year")["r"].mean()
    found: list[AbnormalYear] = []
    for y in ok:
        mask = (years == y) & np.isfinite(r)
        others = np.isin(years, ok) & (years != y) & np.isfinite(r)
        m = int(mask.sum())
        # pooled within-year variance of the other years: the tested year cannot mask itself
        df_other = int(others.sum()) - (len(ok) - 1)
        if df_other < 2:
            continue
        var = float((dev[others] ** 2).sum()) / df_other
        if var <= 0:
            continue
        in_year = periods[years == y]
        start, end = in_year[0].start_time.normalize(), in_year[-1].end_time.normalize()
        mean = float(r[mask].mean()) - float(r[others].mean())
        z_level = mean / np.sqrt(var * inflation / m)
        p_level = float(2 * t_dist.sf(abs(z_level), df_other * df_factor))
        p_between = _between_years(float(yearly[y]), yearly.drop(y).to_numpy())
        if p_level < cut and p_between < cut:
            found.append(AbnormalYear(y, "level", mean, float(z_level), start, end, p_between))
        ratio = float((dev[mask] ** 2).sum()) / (m - 1) / var
        df = (m - 1) * df_factor
        p_spread = float(f_dist.sf(ratio, df, df_other * df_factor))
        if p_spread < cut and ratio >= MIN_SPREAD_RATIO**2:
            found.append(AbnormalYear(y, "spread", float(np.sqrt(ratio)),
                                      float(norm.isf(max(p_spread, 1e-300))), start, end, p_spread))
    return found


def _between_years(mean: float, others: np.ndarray) -> float:
    """Two-sided p of one yearly mean against the other years' means (a t prediction interval).

    Examples
    --------
    >>> round(_between_years(0.3, np.array([0.0, 0.01, -0.01, 0.005])), 6) < 0.001
    True
    """
    k = len(others)
    if k < 2:
        return 1.0
    sd = float(np.std(others, ddof=1))
    if sd <= 0:
        return 0.0 if mean != float(np.mean(others)) else 1.0
    t = (mean - float(np.mean(others))) / (sd * np.sqrt(1 + 1 / k))
    return float(2 * t_dist.sf(abs(t), k - 1))


def _lag1(r: np.ndarray) -> float:
    """Lag-1 autocorrelation of the residuals (gaps skipped), clipped to 0..0.9."""
    x = r - np.nanmean(r)
    a, b = x[:-1], x[1:]
    ok = np.isfinite(a) & np.isfinite(b)
    if ok.sum() < 3:
        return 0.0
    rho = float((a[ok] * b[ok]).sum() / np.nansum(x * x))
    return float(np.clip(rho, 0.0, 0.9))


def exclusion_advice(flagged: list[AbnormalYear], years: list[int]) -> dict[int, str]:
    """For each flagged year: ``""`` when excluding it is suggested, else why not.

    Excluding a year removes data, so it is suggested only when it is safe:
    never the latest year of the history (a departure there is as likely the
    start of a new level; the plan needs the latest level) and never more
    than :data:`MAX_EXCLUDED_SHARE` of the years (when more depart, the
    model's level drifts: a level shift or trend is missing), unless the
    evidence is overwhelming (p below :data:`OVERWHELMING_P`). Within the
    share the strongest departures are suggested first.

    Parameters
    ----------
    flagged : list of AbnormalYear
    years : list of int
        The calendar years of the history (each once).

    Examples
    --------
    >>> t = pd.Timestamp("2020-01-01")
    >>> a = [AbnormalYear(y, "level", 0.3, 9.0, t, t, 1e-4) for y in (2019, 2023)]
    >>> advice = exclusion_advice(a, list(range(2014, 2024)))
    >>> advice[2019], advice[2023][:15]
    ('', 'the latest year')
    """
    by_year: dict[int, float] = {}
    for a in flagged:
        by_year[a.year] = min(by_year.get(a.year, 1.0), a.p_value if np.isfinite(a.p_value) else 1.0)
    room = int(np.floor(MAX_EXCLUDED_SHARE * len(years)))
    latest = max(years) if years else None
    advice: dict[int, str] = {}
    taken = 0
    for year in sorted(by_year, key=lambda y: by_year[y]):
        overwhelming = by_year[year] < OVERWHELMING_P
        if year == latest and not overwhelming:
            advice[year] = ("the latest year: a departure there may be a new level (a level shift) and "
                            "the plan needs the latest level; watch it rather than exclude it")
        elif len(by_year) > MAX_EXCLUDED_SHARE * len(years) and not overwhelming:
            advice[year] = (f"{len(by_year)} of {len(years)} years depart from the model, more than "
                            f"{MAX_EXCLUDED_SHARE:.0%} of the history: its level drifts (a level shift or "
                            "a trend is missing), and excluding them would leave too little history")
        elif taken >= room and not overwhelming:
            advice[year] = f"already {taken} of {len(years)} years suggested for exclusion"
        else:
            advice[year] = ""
            taken += 1
    return advice
