"""Plans for the series of a panel in blocks: one horizon design per design group, m coefficient vectors.

The series of a panel that share a design (same fit rows, transform and
trend origin: :mod:`evcal.engine.groups`) are solved again in their blocks
from the folder's stored histories, exactly as the engine fitted them and as
the single-series plan refits each one (:meth:`evcal.panel.result.PanelResult.series_result`):
coefficients, the θ their event columns were aggregated with, the smearing
factor and each series' whole covariance. The horizon's design and schedule
are built once per group (:func:`evcal.plan.build.horizon`); base, plan and
every lift come from the one decomposition for all the block's series
(:func:`evcal.plan.build.plan_parts`); the intervals from one simulation of
the block (:func:`evcal.plan.simulate.simulate_block`), with the same random
numbers per series as the single-series plan.

What the blocks do not handle goes to the single-series plan, series by
series: the per-series estimators' series (ARIMA errors, count models) and
series whose block fit broke down (the engine refits those on their own).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from types import SimpleNamespace
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.curved import CurvedEvents
from evcal.design.events import EventColumns
from evcal.model.estimators import ar_covariances, prewhitened_errors
from evcal.model.passes import theta_sources
from evcal.plan.build import Horizon, horizon, plan_group, plan_parts
from evcal.plan.horizon import period_dates
from evcal.plan.schedule import resolve_schedule
from evcal.plan.simulate import scheduled_terms, simulate_block

__all__ = ["BlockFit", "solve_block", "plan_block", "series_weak"]

#: series whose (periods x coefficients) designs are factorised at once for their covariances
COV_CHUNK = 64


@dataclass
class BlockFit:
    """The fitted state a plan needs of a block's series (those not broken), in fitted-column order."""

    group: Any  # evcal.engine.groups.Group
    sids: np.ndarray  # series positions in the panel
    params: np.ndarray  # (k, m)
    theta: dict[str, np.ndarray]  # column -> (m,) log-lift its event column was aggregated with
    smear: np.ndarray  # (m,)
    sigma2: np.ndarray  # (m,)
    cov: np.ndarray | None  # (m, k, k), None when no interval is wanted
    broken: np.ndarray  # positions of the unit's series that go to the single-series plan


def solve_block(unit: Any, covariance: bool = True) -> BlockFit:
    """Solve a batched unit of the engine (:func:`evcal.engine.run.plan_units`) as the engine does.

    The solve and the exact-aggregation passes are the engine's
    (:func:`evcal.engine.units.run_batch`, without the output tables); each
    series' covariance is its whole final design's, as
    :func:`evcal.engine.units._block_model` makes it for a block of one.
    """
    from evcal.engine.units import solve_unit

    g = unit.shared.group
    rows = g.rows
    solved = solve_unit(unit)
    refined, B, E, smear, sigma2 = solved.refined, solved.B, solved.E, solved.smear, solved.sigma2
    broken = solved.broken
    keep = ~broken
    cols = g.info.fitted_cols
    theta: dict[str, np.ndarray] = {}
    m = int(keep.sum())
    own: dict[int, np.ndarray] = {}  # column -> (m, n): the columns each series has its own values in
    if refined is not None:
        sources = theta_sources(g.info.status, g.info.roles, g.info.like_map, cols)
        theta = {c: refined.theta_in[s][keep] for c, s in sources.items() if s in refined.theta_in}
        theta.update({c: np.full(m, float(np.log1p(a))) for c, a in g.info.assumed.items()})
        if covariance:
            # the last pass's design of each series: its event columns for its own θ
            idx = {c: i for i, c in enumerate(cols)}
            for c, v in refined.curved.items():  # fitted columns first: a borrowed one adds onto its target
                if g.info.status[c].status == "fitted" and c in idx:
                    own[idx[c]] = v[keep][:, rows]
            for c, v in refined.curved.items():
                target = g.info.like_map.get(c)
                if g.info.status[c].status == "like" and target in idx:
                    j = idx[target]
                    own[j] = (own[j] if j in own else np.broadcast_to(g.solve.X[:, j], (m, len(rows)))) \
                        + v[keep][:, rows]
    cov = _covariances(g.solve.X, own, E[:, keep]) if covariance else None
    return BlockFit(g, unit.sids[keep], B[:, keep], theta, smear[keep], sigma2[keep], cov,
                    unit.sids[broken])


def _covariances(X: np.ndarray, own: dict[int, np.ndarray], E: np.ndarray) -> np.ndarray:
    """Each series' coefficient covariance (m, k, k): design ``X`` (n, k), whose columns ``own`` (j -> (m, n))
    each series has its own values in; residuals ``E`` (n, m).

    The prewhitened sandwich (HC2 with a floor at high leverage) of
    :class:`evcal.engine.batched.SharedSolve`, a few series at a time, with ``Z = X (XᵀX)⁻¹``
    by Frisch–Waugh–Lovell: the shared columns ``S`` are factorised once (``S = QR``), each series' own
    columns ``V`` projected off them (``Ṽ = V − QQᵀV``), and
    ``Z = [S R⁻¹ Q-part − Z_V (R⁻¹QᵀV)ᵀ, Z_V]`` with ``Z_V = Ṽ (ṼᵀṼ)⁻¹``; the
    leverage is ``Σ Q² + Σ Z_V Ṽ``. Only the few event columns are per series.
    """
    n, k = X.shape
    m = E.shape[1]
    var = sorted(own)
    fixed = [j for j in range(k) if j not in own]
    Q, R = np.linalg.qr(X[:, fixed])
    Rinv = np.linalg.inv(R)
    Z0 = Q @ Rinv.T  # the shared columns' Z when no column is per series
    h0 = np.einsum("nk,nk->n", Q, Q)
    out = np.empty((m, k, k))
    for a in range(0, m, COV_CHUNK):
        b = min(a + COV_CHUNK, m)
        Z = np.empty((n, k, b - a))
        if var:
            V = np.stack([own[j][a:b] for j in var], axis=2)  # (c, n, v)
            C = np.matmul(Q.T, V)  # (c, kf, v)
            Vt = V - np.matmul(Q, C)
            ZV = np.matmul(Vt, np.linalg.inv(np.matmul(np.swapaxes(Vt, 1, 2), Vt)))  # (c, n, v)
            D = np.matmul(Rinv, C)  # (c, kf, v): the shared coefficients' move per unit of V
            ZS = Z0[None] - np.matmul(ZV, np.swapaxes(D, 1, 2))
            Z[:, fixed] = np.moveaxis(ZS, 0, 2)
            Z[:, var] = np.moveaxis(ZV, 0, 2)
            lev = h0[:, None] + np.einsum("cnv,cnv->nc", ZV, Vt)
        else:
            Z[...] = Z0[:, :, None]
            lev = np.broadcast_to(h0[:, None], (n, b - a))
        errors = prewhitened_errors(E[:, a:b], lev)
        out[a:b] = ar_covariances(Z, errors)
    return out


def group_view(g: Any, allow_negative: bool = False) -> SimpleNamespace:
    """What the plan reads of a model, for a design group (θ apart: the plan bends the columns per series).

    ``allow_negative``: the panel was fitted with it (its series may be negative: no floor at zero,
    :mod:`evcal.plan.floor`).
    """
    info = g.info
    return SimpleNamespace(options=SimpleNamespace(allow_negative=allow_negative),
                           spec=replace(info.spec, event_theta={}), base_columns=info.base_columns,
                           status=info.status, params=pd.Series(0.0, index=info.fitted_cols),
                           like_map=info.like_map, assumed=info.assumed, event_info=info.event_info,
                           transform=info.transform, intervention_names=info.intervention_names,
                           closure_events=info.closure_events, event_labels=info.event_labels)


def plan_block(fit: BlockFit, h: Horizon, cal: Any, n_sims: int, seed: int) -> dict[str, Any]:
    """Base, plan, low, high (m, n), each lift (m, n) and the assumptions of a block's series on ``h``."""
    g = fit.group
    view = group_view(g)
    m, n = len(fit.sids), len(h.periods)
    cols = g.info.fitted_cols
    pmap = {c: fit.params[i] for i, c in enumerate(cols)}
    # the horizon's event columns for each series' θ (EventColumns' rule for where θ comes from)
    ev = EventColumns(view.spec.calendar(cal), h.event_cols, {c: 0.0 for c in fit.theta})
    curve = CurvedEvents(ev.calendar, h.event_cols, h.periods)
    theta = {}
    for c in h.event_cols:
        source, fixed = ev.theta_source(c)
        theta[c] = fit.theta[source] if source in fit.theta else np.full(m, fixed)
    curved = curve.columns(theta)
    smear = np.broadcast_to((fit.smear if g.transform == "log" else np.ones(m))[:, None], (m, n))
    base, fitted, lifts, floored = plan_parts(h, plan_group(view, h), pmap, smear, curved=curved)
    out = {"base": base, "plan": fitted, "lifts": lifts, "floored": floored}
    if n_sims > 0 and fit.cov is not None:
        M, const = _level_map(fit, h, curved)
        out["low"], out["high"] = simulate_block(g.transform, fit.params.T, fit.cov, M, const,
                                                 np.sqrt(np.clip(fit.sigma2, 0.0, None)),
                                                 h.share.to_numpy(dtype=float), n_sims, seed, floor=h.floor)
    else:
        out["low"] = out["high"] = np.full((m, n), np.nan)
    return out


def _level_map(fit: BlockFit, h: Horizon, curved: dict[str, np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """``M`` (m, n, k) and ``const`` (m, n): the model-scale level of each period as ``M β + const``.

    The terms :func:`evcal.plan.simulate.simulate_interval` draws: the base
    columns, each scheduled event column on its own or borrowed coefficient,
    assumed lifts fixed (on the log scale ``log(1 + a)``; in the additive model a
    share ``a`` of the base).
    """
    g = fit.group
    cols = g.info.fitted_cols
    idx = {c: i for i, c in enumerate(cols)}
    m, n, k = len(fit.sids), len(h.periods), len(cols)
    M = np.zeros((m, n, k))
    const = np.zeros((m, n))
    for c in h.base_cols:
        if c in idx:
            M[:, :, idx[c]] = h.X[c].to_numpy(dtype=float)
    scale = np.ones((m, n))
    def column(c: str) -> np.ndarray:  # a future change is the same for every series
        return curved[c] if c in curved else np.broadcast_to(h.X[c].to_numpy(dtype=float), (m, n))

    for x, source, assumed in scheduled_terms(h.schedule, column):
        if assumed is None:
            if source in idx:
                M[:, :, idx[source]] += x
        elif g.transform == "none":
            scale += assumed * x
        else:
            const += np.log1p(assumed) * x
    if g.transform == "none":
        base_idx = [idx[c] for c in h.base_cols if c in idx]
        M[:, :, base_idx] *= scale[:, :, None]
    return M, const


def block_frame(fit: BlockFit, h: Horizon, parts: dict[str, Any], label: str,
                weak: dict[str, np.ndarray] | None = None, cal: Any = None,
                new_events: str = "error") -> pd.DataFrame:
    """The long plan table of a block: ``_sid, date, base, plan, low, high, lift:<event>..., assumptions``.

    ``weak`` (column -> bool per series position, :func:`series_weak`) marks the
    lifts a series' own interval makes weak; those series' ``assumptions`` say
    so as the single-series plan does (``cal`` and ``new_events``: the plan's).
    """
    m, n = len(fit.sids), len(h.periods)
    frame = {"_sid": np.repeat(fit.sids, n), "date": np.tile(period_dates(h.periods, label), m)}
    for c in ("base", "plan", "low", "high"):
        frame[c] = parts[c].ravel()
    for ev in h.events:
        frame[f"lift:{ev}"] = parts["lifts"][ev].ravel()
    frame["assumptions"] = _assumptions(fit, h, weak or {}, cal, new_events).ravel()
    return pd.DataFrame(frame)


def series_weak(lifts: pd.DataFrame, keys: pd.DataFrame) -> dict[str, np.ndarray]:
    """Column -> whether each series of ``keys`` (in its order) has the lift ``weak`` in ``lifts``.

    The panel's lifts table grades each series on its own interval
    (:func:`evcal.effects.wide.too_wide` in :func:`evcal.effects.block.lifts_columns`),
    so a series can be weak where its design group is not; this reads it back, as
    :func:`evcal.engine.series.adopt_tables` does for a single series.
    """
    cols = list(keys.columns)
    weak = lifts.loc[lifts["identifiable"].astype(str) == "weak", [*cols, "event"]]
    if weak.empty:
        return {}
    wanted = keys.astype(str).assign(_pos=np.arange(len(keys)))
    hit = weak.astype(str).merge(wanted, on=cols)
    out: dict[str, np.ndarray] = {}
    for col, pos in hit.groupby("event")["_pos"]:
        out[str(col)] = np.zeros(len(keys), dtype=bool)
        out[str(col)][pos.to_numpy()] = True
    return out


def _assumptions(fit: BlockFit, h: Horizon, weak: dict[str, np.ndarray], cal: Any,
                 new_events: str) -> np.ndarray:
    """The ``assumptions`` texts (m, n) of a block's series: the group's, and where a series' own lift is
    weak (its fitted column not weak in the group), the schedule resolved again with it weak."""
    texts = np.array(h.assumption_texts(), dtype=object)
    status = fit.group.info.status
    cols = [c for c in weak if c in status and status[c].status == "fitted" and not status[c].weak]
    out = np.tile(texts, (len(fit.sids), 1))
    if not cols:
        return out
    marks = np.stack([weak[c][fit.sids] for c in cols], axis=1)
    patterns, which = np.unique(marks, axis=0, return_inverse=True)
    for p, pattern in enumerate(patterns):
        if not pattern.any():
            continue
        mine = [c for c, w in zip(cols, pattern, strict=True) if w]
        own = {**status, **{c: replace(status[c], weak=True) for c in mine}}
        view = SimpleNamespace(**{**vars(group_view(fit.group)), "status": own})
        schedule = resolve_schedule(view, cal, h.X[h.event_cols], new_events)
        notes = {**schedule.notes, **{name: h.schedule.notes[name] for name in h.future}}
        active = {ev: note for ev, note in notes.items() if h.on_own[ev].any()}
        out[which.ravel() == p] = np.array(replace(h, active=active).assumption_texts(), dtype=object)
    return out


def group_horizon(fit: BlockFit, cal: Any, periods: pd.PeriodIndex, new_events: str,
                  allow_negative: bool = False) -> Horizon:
    """The horizon of a block's design group (``allow_negative``: the panel's fit option; without it an
    additive group's plans are floored at zero, :mod:`evcal.plan.floor`)."""
    return horizon(group_view(fit.group, allow_negative), cal, periods, new_events)
