"""Fit settings, validated at the boundary (scikit-learn style: settings apart from fitted state)."""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

from evcal.errors import EvcalError

TRANSFORMS = ("auto", "log", "none", "count")
ERRORS = ("auto", "ols", "arima")
SEASONAL = ("auto", "dummies", "fourier")
#: the value of a setting the data choose (:mod:`evcal.model.choose`)
AUTO = "auto"


@dataclass(frozen=True)
class FitOptions:
    """How to fit.

    Parameters
    ----------
    transform : {"auto", "log", "none", "count"}
        ``log``: multiplicative model (default when every value is positive);
        ``none``: additive; ``count``: Poisson / negative-binomial GLM with a
        log link, for series with zeros. ``auto`` picks ``log`` or ``count``.
    errors : {"auto", "ols", "arima"}
        ``ols``: least squares with intervals robust to autocorrelation and heteroskedasticity; ``arima``:
        regression with ARIMA errors (statsmodels SARIMAX); ``auto`` compares
        a few candidates and reports its choice.
    arima_order : tuple of int, optional
        (p, d, q) for ``errors="arima"``; None lets the fit choose among candidates.
    seasonal : {"auto", "dummies", "fourier"}
        Seasonal terms; ``auto`` = dummies for weekly/monthly/quarterly data,
        weekday dummies plus annual Fourier terms for daily data.
    fourier_order : int or "auto"
        Harmonics of the annual Fourier terms; ``auto`` (default): chosen by AICc
        (:mod:`evcal.model.choose`).
    trend_order : int
        0 = flat level, 1 = linear trend (default), 2 = quadratic.
    trading_days : bool or "auto"
        Weekday-composition columns for monthly and quarterly data; ``auto``
        (default): kept when AICc prefers them.
    leap_year : bool or "auto"
        The leap-year column of monthly and quarterly data (0.75 in a leap February,
        -0.25 in other Februaries); ``auto`` (default): kept when AICc prefers it.
    season_drift : bool or "auto"
        A season that drifts (each seasonal dummy of monthly or quarterly data times the
        years, :class:`evcal.design.seasonal.SeasonDrift`); ``auto`` (default): kept when
        AICc prefers it on a long enough history.
    allow_negative : bool
        Accept negative values (forces an additive model).
    """

    transform: str = "auto"
    errors: str = "auto"
    arima_order: tuple[int, int, int] | None = None
    seasonal: str = "auto"
    fourier_order: int | str = AUTO
    trend_order: int = 1
    trading_days: bool | str = AUTO
    allow_negative: bool = False
    leap_year: bool | str = AUTO
    season_drift: bool | str = AUTO

    def __post_init__(self) -> None:
        choices = (("transform", self.transform, TRANSFORMS), ("errors", self.errors, ERRORS),
                   ("seasonal", self.seasonal, SEASONAL))
        problems = [f"option {name}: {value!r} is not one of {', '.join(allowed)}"
                    for name, value, allowed in choices if value not in allowed]
        if not 0 <= int(self.trend_order) <= 2:
            problems.append(f"option trend-order: {self.trend_order} must be 0, 1 or 2")
        if self.fourier_order != AUTO and (isinstance(self.fourier_order, bool | str)
                                           or not 1 <= int(self.fourier_order) <= 60):
            problems.append(f"option fourier-order: {self.fourier_order!r} must be a whole number between 1 "
                            "and 60, or auto (chosen by AICc)")
        for name, value in (("trading-days", self.trading_days), ("leap-year", self.leap_year),
                            ("season-drift", self.season_drift)):
            if value != AUTO and not isinstance(value, bool):
                problems.append(f"option {name}: {value!r} must be true, false or auto (chosen by AICc)")
        if self.arima_order is not None and (
            len(self.arima_order) != 3 or min(self.arima_order) < 0 or max(self.arima_order) > 3
        ):
            problems.append(f"option arima-order: {self.arima_order} must be three integers p,d,q in 0..3")
        if problems:
            raise EvcalError(problems)

    def to_dict(self) -> dict[str, Any]:
        d = asdict(self)
        d["arima_order"] = None if self.arima_order is None else list(self.arima_order)
        if d["leap_year"] is False:  # as folders written before the leap-year column have it (absent)
            del d["leap_year"]
        if d["season_drift"] is False:  # as folders written before the drifting season have it (absent)
            del d["season_drift"]
        return d

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> FitOptions:
        d = dict(d)
        if d.get("arima_order") is not None:
            d["arima_order"] = tuple(d["arima_order"])
        d.setdefault("leap_year", False)  # written before the leap-year column existed
        d.setdefault("season_drift", False)  # written before the drifting season existed
        return cls(**d)
