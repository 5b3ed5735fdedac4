"""Seasonal cycle length from the periodogram and the autocorrelation.

Method (each step a published one):

1. Remove a smooth trend (a quadratic in time, by least squares), because a
   trend puts its power at the lowest frequencies and would hide cycles.
2. Periodogram of the detrended series (``scipy.signal.periodogram``) at the
   Fourier frequencies whose period lies in ``[2, max_period]``.
3. Significant ordinates by **Fisher's g test** (Fisher 1929, "Tests of
   significance in harmonic analysis", Proc. Roy. Soc. A 125:54-59), applied
   successively to the remaining ordinates after the largest ones are taken
   out (Whittle 1952's extension for several periodic terms).
4. Nearby significant ordinates (within 15 % in period: leakage around a
   frequency that is not a Fourier frequency, or a quasi-periodic cycle such
   as the sunspot cycle) are merged into one peak, its period the
   power-weighted mean.
5. A cycle of length ``Q`` explains the peaks at its harmonics ``h / Q``
   (``h = 1 .. 10``; a seasonal pattern that is not a sinusoid puts power at
   several harmonics, and the fundamental may be the weaker one, as in
   monthly orders with a quarter-end pattern). The candidates are the
   strongest peak's period times 1..6; the shortest one that explains at
   least 90 % of the best candidate's significant power is kept.
6. **ACF confirmation**: the sample autocorrelation
   (``statsmodels.tsa.stattools.acf``) must have a positive local maximum
   within 10 % of lag ``Q`` above Bartlett's (1946) 95 % band (the
   correlogram reading of a cycle, e.g. Box & Jenkins 1976 ch. 2). A
   red-noise spectrum (e.g. a random walk) has a large low-frequency
   periodogram but no such ACF peak, so this step removes false cycles.

``strength`` is the R² of the cycle's Fourier fit (harmonics 1..10) to the
detrended series. After a cycle is accepted its fit is subtracted and the
search repeats on what is left, so multiples of the first cycle are not
reported as cycles of their own. No cycle is an answer too ("no clear cycle").
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.signal import periodogram
from statsmodels.tsa.stattools import acf

__all__ = ["Cycle", "detect_cycles", "describe_cycles", "fisher_g_pvalue"]

#: harmonics a cycle may explain (a seasonal shape rarely has power beyond)
MAX_HARMONIC = 10
#: peaks closer than this (relative, in period) are one cycle
MERGE_TOLERANCE = 0.15
MAX_CYCLES = 3
#: 2 %: significant on a long series, but too small to matter for a seasonal index
MIN_STRENGTH = 0.02


@dataclass(frozen=True)
class Cycle:
    """One detected cycle.

    Attributes
    ----------
    period : float
        Cycle length in periods of the series (periodogram, power-weighted).
    lag : int
        The ACF peak lag that confirms it (the integer period to use in a model).
    strength : float
        Share of the detrended variance at this cycle's harmonics, 0..1.
    acf : float
        Sample autocorrelation at ``lag``.
    p_value : float
        Fisher's g p-value of the cycle's strongest ordinate (successive test).
    """

    period: float
    lag: int
    strength: float
    acf: float
    p_value: float


def fisher_g_pvalue(g: float, m: int) -> float:
    """P(G > g) for Fisher's g statistic with ``m`` periodogram ordinates.

    Fisher (1929): ``P(G > g) = sum_{j=1}^{floor(1/g)} (-1)^(j-1) C(m, j) (1 - j g)^(m-1)``.
    The alternating sum loses precision when many terms are needed (small
    ``g``, where the p-value is near 1 anyway); there the first term, an upper
    bound, is used.

    Examples
    --------
    >>> round(fisher_g_pvalue(0.5, 10), 6)  # only j = 1 contributes: 10 * 0.5**9
    0.019531
    """
    if m < 2 or g <= 0:
        return 1.0
    if g >= 1:
        return 0.0
    terms = math.floor(1.0 / g)
    if terms > 30:
        return min(1.0, m * (1.0 - g) ** (m - 1))
    total = sum((-1) ** (j - 1) * math.comb(m, j) * (1.0 - j * g) ** (m - 1) for j in range(1, terms + 1))
    return float(min(1.0, max(0.0, total)))


def _prepare(series: pd.Series | np.ndarray) -> np.ndarray:
    """Fill gaps by linear interpolation (cycles need an unbroken grid) and detrend."""
    x = pd.Series(np.asarray(series, dtype=float)).interpolate(limit_direction="both").to_numpy(dtype=float)
    t = np.arange(len(x), dtype=float)
    return x - np.polyval(np.polyfit(t, x, 2), t) if len(x) >= 3 else x


def _significant_ordinates(
    freq: np.ndarray, power: np.ndarray, alpha: float
) -> list[tuple[float, float, float]]:
    """(frequency, power, p) of ordinates significant by successive Fisher g tests."""
    order = np.argsort(power)[::-1]
    remaining = float(power.sum())
    m = len(power)
    found: list[tuple[float, float, float]] = []
    for rank, i in enumerate(order):
        if remaining <= 0 or m - rank < 2:
            break
        p = fisher_g_pvalue(float(power[i]) / remaining, m - rank)
        if p > alpha:
            break
        found.append((float(freq[i]), float(power[i]), p))
        remaining -= float(power[i])
    return found


def _merge_peaks(ordinates: list[tuple[float, float, float]]) -> list[tuple[float, float, float]]:
    """Merge ordinates within MERGE_TOLERANCE in period: (period, power, best p)."""
    groups: list[list[tuple[float, float, float]]] = []
    for o in sorted(ordinates, key=lambda o: 1.0 / o[0]):
        anchor = 1.0 / max(groups[-1], key=lambda g: g[1])[0] if groups else None
        if anchor is not None and abs(1.0 / o[0] - anchor) <= MERGE_TOLERANCE * anchor:
            groups[-1].append(o)
        else:
            groups.append([o])
    peaks = []
    for g in groups:
        w = np.array([o[1] for o in g])
        periods = np.array([1.0 / o[0] for o in g])
        peaks.append((float((w * periods).sum() / w.sum()), float(w.sum()), min(o[2] for o in g)))
    return peaks


def _is_harmonic(period: float, cycle: float, n: int) -> bool:
    """Is a peak at ``period`` the h-th harmonic of ``cycle`` (h <= MAX_HARMONIC)?"""
    ratio = cycle / period
    h = round(ratio)
    if h < 1 or h > MAX_HARMONIC:
        return False
    # half a frequency bin (1/n) or 2 % of the harmonic's frequency
    return abs(1.0 / period - h / cycle) <= max(0.5 / n, 0.02 * h / cycle)


def _acf_peak(r: np.ndarray, near: float, n: int) -> tuple[int, float] | None:
    """Highest ACF local maximum within 10 % (at least 1 lag) of ``near``, if significant.

    Significant means above the 95 % band of Bartlett's (1946) formula,
    ``se(r_k)^2 = (1 + 2 sum_{j<k} rho_j^2) / n``, with ``rho`` the
    autocorrelation of the series *without* the candidate cycle (its Fourier
    fit removed): the band is the one the rest of the series would give. A
    slowly wandering series (red noise) keeps its autocorrelation when a slow
    "cycle" is taken out, so its band stays wide and its long-lag wiggles are
    not mistaken for a cycle; a real cycle leaves a narrow band behind.
    """
    width = max(1, int(round(0.1 * near)))
    hi = min(n - 2, int(round(near)) + width)
    lo = max(1, int(round(near)) - width)
    if hi <= lo:
        return None
    rho = acf(r, nlags=hi + 1, fft=True)
    background = acf(r - _harmonic_fit(r, near), nlags=hi + 1, fft=True)
    cum = np.concatenate([[0.0], np.cumsum(background[1:] ** 2)])  # cum[k] = sum_{j<=k}
    best: tuple[int, float] | None = None
    for k in range(lo, hi + 1):
        half_width = 1.96 * np.sqrt((1.0 + 2.0 * cum[k - 1]) / n)
        is_peak = rho[k] >= rho[k - 1] and rho[k] >= rho[k + 1]
        if is_peak and rho[k] > half_width and (best is None or rho[k] > best[1]):
            best = (k, float(rho[k]))
    return best


def detect_cycles(series: pd.Series | np.ndarray, *, alpha: float = 0.01) -> list[Cycle]:
    """Detect the seasonal cycle(s) of a regularly spaced series.

    Cycles up to half the series long (two full cycles are the least that
    shows one) are considered; at most :data:`MAX_CYCLES` are returned, in the
    order found (each round takes the strongest remaining peak), and none that
    explains less than :data:`MIN_STRENGTH` of the detrended variance.

    Parameters
    ----------
    series : Series or array
        Values on a regular grid (gaps are interpolated for this step only).
    alpha : float
        Significance level of each successive Fisher g test (default 0.01).

    Returns
    -------
    list of Cycle
        Empty when there is no clear cycle.

    Examples
    --------
    >>> import numpy as np
    >>> t = np.arange(120)
    >>> x = 10 + np.sin(2 * np.pi * t / 12) + np.random.default_rng(0).normal(0, .3, 120)
    >>> [c.lag for c in detect_cycles(x)]
    [12]
    """
    r = _prepare(series)
    n = len(r)
    if n < 12 or not np.isfinite(r).all() or np.allclose(r, 0):
        return []
    max_period = n / 2.0
    base_var = float(np.var(r))
    cycles: list[Cycle] = []
    rejected: list[float] = []
    while len(cycles) < MAX_CYCLES:
        freq, power = periodogram(r, detrend=False, scaling="spectrum")
        band = (freq >= 1.0 / max_period) & (freq > 0) & (freq < 0.5)
        if band.sum() < 3:
            break
        peaks = _merge_peaks(_significant_ordinates(freq[band], power[band], alpha))
        peaks = [p for p in peaks if not any(abs(p[0] - q) <= 0.5 for q in rejected)]
        if not peaks:
            break
        strongest = max(peaks, key=lambda p: p[1])
        chosen = _choose_fundamental(strongest, peaks, r, n, max_period)
        if chosen is None:
            rejected.append(strongest[0])
            continue
        q, lag, rho = chosen
        members = [p for p in peaks if _is_harmonic(p[0], q, n)]
        fundamental = [p for p in members if abs(p[0] - q) <= MERGE_TOLERANCE * q]
        period = _refine_period(r, fundamental[0][0] if fundamental else q)
        if any(abs(period - c.period) <= MERGE_TOLERANCE * c.period for c in cycles):
            # what is left of a cycle already found (its amplitude drifts): not a new one
            rejected.extend(p[0] for p in members)
            r = r - _harmonic_fit(r, period)
            continue
        harmonics = _harmonic_fit(r, period)
        strength = float(min(1.0, np.var(harmonics) / base_var))
        if strength < MIN_STRENGTH:
            break
        cycles.append(Cycle(float(period), int(lag), strength, float(rho), float(min(p[2] for p in members))))
        r = r - harmonics  # look for the next cycle in what this one leaves
    return cycles


def _choose_fundamental(
    strongest: tuple[float, float, float],
    peaks: list[tuple[float, float, float]],
    r: np.ndarray,
    n: int,
    max_period: float,
) -> tuple[float, int, float] | None:
    """The cycle the strongest peak belongs to: (period, ACF lag, ACF), or None.

    Candidates are the peak's period times 1..6; each explains the power of the
    significant peaks at its harmonics. The shortest candidate explaining at
    least 90 % of the best is taken (a multiple of a cycle explains the same
    power and a little noise), and it must be confirmed by the ACF.
    """
    multiples = [q for q in (strongest[0] * m for m in range(1, 7)) if q <= max_period]
    if not multiples:
        return None
    explained = [sum(pw for pp, pw, _ in peaks if _is_harmonic(pp, q, n)) for q in multiples]
    q = next(q for q, e in zip(multiples, explained, strict=True) if e >= 0.9 * max(explained))
    peak = _acf_peak(r, q, n)
    return None if peak is None else (q, peak[0], peak[1])


def _refine_period(r: np.ndarray, period: float) -> float:
    """Period within 3 % of ``period`` whose Fourier fit explains the most variance.

    The periodogram only sees the Fourier frequencies k/n; a weekly series has
    an annual cycle of 52.18 weeks, between two of them. Least squares on a fine
    grid around the peak recovers it (the idea of the Lomb-Scargle periodogram).
    """
    grid = np.linspace(0.97 * period, 1.03 * period, 61)
    fits = [float(np.var(_harmonic_fit(r, q))) for q in grid]
    return float(grid[int(np.argmax(fits))])


def _harmonic_fit(r: np.ndarray, period: float) -> np.ndarray:
    """Least-squares fit of Fourier terms at ``period`` (harmonics up to MAX_HARMONIC)."""
    n = len(r)
    t = np.arange(n, dtype=float)
    h_max = max(1, min(MAX_HARMONIC, int(period // 2)))
    cols = []
    for h in range(1, h_max + 1):
        w = 2 * np.pi * h * t / period
        cols += [np.cos(w), np.sin(w)]
        if 2 * h == period:  # the sine at Nyquist is identically zero
            cols.pop()
    x = np.column_stack(cols)
    beta, *_ = np.linalg.lstsq(x, r - r.mean(), rcond=None)
    return x @ beta


def describe_cycles(cycles: list[Cycle]) -> str:
    """One readable line per cycle, or "no clear cycle".

    Examples
    --------
    >>> describe_cycles([])
    'no clear cycle (no significant periodogram peak confirmed by the autocorrelation)'
    """
    if not cycles:
        return "no clear cycle (no significant periodogram peak confirmed by the autocorrelation)"
    return "; ".join(f"cycle of {c.period:.1f} periods (lag {c.lag}); strength {c.strength:.2f}, "
                     f"ACF {c.acf:.2f}, Fisher p {c.p_value:.1g}" for c in cycles)
