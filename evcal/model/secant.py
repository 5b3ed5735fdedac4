"""A secant step per coordinate for the exact-aggregation passes' fixed point (:mod:`evcal.model.passes`)."""

from __future__ import annotations

import numpy as np

__all__ = ["MAX_RATE", "Secant", "secant_step"]

#: the largest rate extrapolated: nearer 1 the step 1 / (1 - r) amplifies the passes' noise
MAX_RATE = 0.95


def secant_step(x0: np.ndarray, g0: np.ndarray, x1: np.ndarray,
                g1: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The next passes' inputs of many series at once, from each series' last two passes.

    ``x0``, ``x1`` (k, m) are two consecutive passes' inputs (k coordinates of m series) and ``g0``,
    ``g1`` their outputs. Each coordinate's rate ``r = (g1 − g0) / (x1 − x0)`` gives the fixed point
    of its line, ``x1 + (g1 − x1) / (1 − r)``. A negative rate (the lift overshoots and comes back
    by a shrinking amount each pass, as the first pass's share-of-window lifts often do) gives a
    step shorter than the pass's own, ``1 / (1 − r)`` in (0.5, 1); a positive one a longer step,
    at most 20 times the pass's. A coordinate whose rate is not a contraction (``|r|`` above
    :data:`MAX_RATE`, or no move to read it from) takes ``g1``. Returns the
    inputs (k, m) and which series took a step (m,): a series none of whose coordinates qualifies,
    or whose step is not finite, goes on from ``g1`` unchanged. One series (m = 1) is what
    :class:`Secant` runs; the batched passes of :mod:`evcal.engine.refine` run the same arithmetic
    on a block, so a series takes the same path either way.

    Examples
    --------
    >>> x0, x1 = np.array([[1.0], [0.5]]), np.array([[0.6], [0.5]])  # two passes of F(x) = 0.5 x + 0.1
    >>> out, stepped = secant_step(x0, 0.5 * x0 + 0.1, x1, 0.5 * x1 + 0.1)
    >>> out[:, 0].round(12).tolist(), stepped.tolist()  # the fixed point 0.2; 0.5 is not moving
    ([0.2, 0.35], [True])
    """
    dx = x1 - x0
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        r = np.where(np.abs(dx) > 1e-12, (g1 - g0) / dx, np.nan)
        ok = np.isfinite(r) & (np.abs(r) <= MAX_RATE)
        out = np.where(ok, x1 + (g1 - x1) / np.where(ok, 1.0 - r, 1.0), g1)
    stepped = ok.any(axis=0) & np.isfinite(out).all(axis=0)
    return np.where(stepped, out, g1), stepped


class Secant:
    """The exact-aggregation passes' fixed point θ = F(θ), reached by a secant step per coordinate.

    A pass maps the log-lifts its event columns were built with (and, with trading-day weights, the
    weekday levels) to the ones it fits. Plain passes converge linearly, slowly when a lift is large:
    on weekly Chicago boardings (US holidays) Labor Day's move shrank by only 0.64 a pass and was still
    0.014 after the 8th and last (19 passes to settle). The lifts barely interact, so each coordinate's
    rate ``r = ΔF/Δθ`` is read from its last two passes and the next input is the fixed point of that
    line, ``θ + (F(θ) − θ) / (1 − r)`` (Aitken's Δ² process, as Steffensen's method applies it; the
    secant method on ``F(θ) − θ``): :func:`secant_step`. The fixed point and the stopping rule are the
    plain passes': only the path to it is shorter (5 passes there; on the panel benchmark's invented
    series, whose lifts alternate about their fixed point, 3-4 passes instead of 3-7).
    """

    def __init__(self) -> None:
        self.keys: tuple[str, ...] = ()
        self.last: tuple[np.ndarray, np.ndarray] | None = None  # the previous pass's input and output

    def next(self, theta: dict[str, float], levels: list[float] | None, new: dict[str, float],
             new_levels: list[float] | None) -> tuple[dict[str, float], list[float] | None] | None:
        """The next pass's input after a pass from (``theta``, ``levels``) gave (``new``, ``new_levels``).

        None: go on with the pass's own output (the first pass, or the columns changed).
        """
        keys = tuple(sorted(new))
        if keys != tuple(sorted(theta)) or (new_levels is None) != (levels is None):
            self.last, self.keys = None, ()
            return None
        x1 = np.r_[[theta[k] for k in keys], levels or []].astype(float)
        g1 = np.r_[[new[k] for k in keys], new_levels or []].astype(float)
        last, self.last = (self.last if keys == self.keys else None), (x1, g1)
        self.keys = keys
        if last is None:
            return None
        out, stepped = secant_step(last[0][:, None], last[1][:, None], x1[:, None], g1[:, None])
        if not stepped[0]:
            return None
        out = out[:, 0]
        mixed = {k: float(v) for k, v in zip(keys, out[: len(keys)], strict=True)}
        return mixed, (None if levels is None else [float(v) for v in out[len(keys):]])
