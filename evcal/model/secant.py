"""A secant step per coordinate for the exact-aggregation passes' fixed point (:mod:`evcal.model.passes`)."""

from __future__ import annotations

import numpy as np

__all__ = ["Secant"]


class Secant:
    """The exact-aggregation passes' fixed point θ = F(θ), reached by a secant step per coordinate.

    A pass maps the log-lifts its event columns were built with (and, with trading-day weights, the
    weekday levels) to the ones it fits. Plain passes converge linearly, slowly when a lift is large:
    on weekly Chicago boardings (US holidays) Labor Day's move shrank by only 0.64 a pass and was still
    0.014 after the 8th and last (19 passes to settle). The lifts barely interact, so each coordinate's
    rate ``r = ΔF/Δθ`` is read from its last two passes and the next input is the fixed point of that
    line, ``θ + (F(θ) − θ) / (1 − r)`` (Aitken's Δ² process, as Steffensen's method applies it; the
    secant method on ``F(θ) − θ``). A coordinate whose rate is not a steady contraction (``r`` outside
    [0, 0.95]) takes the plain pass's output. The fixed point and the stopping rule are the plain
    passes': only the path to it is shorter (5 passes there).
    """

    #: the largest rate extrapolated: nearer 1 the step 1 / (1 - r) amplifies the passes' noise
    MAX_RATE = 0.95

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
        x0, g0 = last
        dx = x1 - x0
        with np.errstate(divide="ignore", invalid="ignore"):
            r = np.where(np.abs(dx) > 1e-12, (g1 - g0) / dx, np.nan)
        ok = np.isfinite(r) & (r >= 0.0) & (r <= self.MAX_RATE)
        out = np.where(ok, x1 + (g1 - x1) / np.where(ok, 1.0 - r, 1.0), g1)
        if not ok.any() or not np.all(np.isfinite(out)):
            return None
        mixed = {k: float(v) for k, v in zip(keys, out[: len(keys)], strict=True)}
        return mixed, (None if levels is None else [float(v) for v in out[len(keys):]])
