"""Fit settings, validated at the boundary (scikit-learn style: settings apart from fitted state)."""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

from evcal.errors import EvcalError

TRANSFORMS = ("auto", "log", "none", "count")
ERRORS = ("auto", "ols", "arima")
SEASONAL = ("auto", "dummies", "fourier")


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
        ``ols``: least squares with HAC (Newey–West) intervals; ``arima``:
        regression with ARIMA errors (statsmodels SARIMAX); ``auto`` compares
        a few candidates and reports its choice.
    arima_order : tuple of int, optional
        (p, d, q) for ``errors="arima"``; None lets the fit choose among candidates.
    seasonal : {"auto", "dummies", "fourier"}
        Seasonal terms; ``auto`` = dummies for weekly/monthly/quarterly data,
        weekday dummies plus annual Fourier terms for daily data.
    fourier_order : int
        Harmonics of the annual Fourier terms.
    trend_order : int
        0 = flat level, 1 = linear trend (default), 2 = quadratic.
    trading_days : bool
        Weekday-composition columns for monthly and quarterly data.
    allow_negative : bool
        Accept negative values (forces an additive model).
    """

    transform: str = "auto"
    errors: str = "auto"
    arima_order: tuple[int, int, int] | None = None
    seasonal: str = "auto"
    fourier_order: int = 10
    trend_order: int = 1
    trading_days: bool = False
    allow_negative: bool = False

    def __post_init__(self) -> None:
        choices = (("transform", self.transform, TRANSFORMS), ("errors", self.errors, ERRORS),
                   ("seasonal", self.seasonal, SEASONAL))
        problems = [f"option {name}: {value!r} is not one of {', '.join(allowed)}"
                    for name, value, allowed in choices if value not in allowed]
        if not 0 <= int(self.trend_order) <= 2:
            problems.append(f"option trend-order: {self.trend_order} must be 0, 1 or 2")
        if not 1 <= int(self.fourier_order) <= 60:
            problems.append(f"option fourier-order: {self.fourier_order} must be between 1 and 60")
        if self.arima_order is not None and (
            len(self.arima_order) != 3 or min(self.arima_order) < 0 or max(self.arima_order) > 3
        ):
            problems.append(f"option arima-order: {self.arima_order} must be three integers p,d,q in 0..3")
        if problems:
            raise EvcalError(problems)

    def to_dict(self) -> dict[str, Any]:
        d = asdict(self)
        d["arima_order"] = None if self.arima_order is None else list(self.arima_order)
        return d

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> FitOptions:
        d = dict(d)
        if d.get("arima_order") is not None:
            d["arima_order"] = tuple(d["arima_order"])
        return cls(**d)
