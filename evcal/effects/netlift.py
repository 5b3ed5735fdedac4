"""Pull-forward: an event's gross lift, its dip periods and the net lift over its whole footprint.

An event with ``dip_after: N`` (or ``dip_before: N``) in the calendar has a companion event,
``promo (dip after)``, with a coefficient of its own, laid out on the N days right after (before)
each occurrence's window (:mod:`evcal.calendar.event_builder`). Its lift is the **dip**; the
event's own lift is the **gross** lift; the **net** is what the event really added over its whole
footprint (window and dip days): per occurrence, the event's added units plus its dips' added units
(``occurrences.csv``); per event, the net units over all its occurrences in % of the level they
acted on over the footprint's days (``lifts.csv``).

The net's interval comes from the same kind of joint draws as the occurrence tables
(:mod:`evcal.effects.occurrences`): 1,000 draws (fixed seed) of the event's and its dips'
coefficients together, from their joint covariance (so a dip estimated against its event, with a
negative correlation, gives the net the narrower interval it has), each draw's footprint units
``Σₜ levelₜ (exp(Σⱼ bⱼ xⱼₜ) − 1)`` (the additive model: ``Σₜ Σⱼ bⱼ xⱼₜ shareₜ``), shifted so that the
draw at the estimates is the point (where other events share the footprint's periods the point
is their Shapley parts; the draws hold those other terms at their estimates). The event's net %
sums every occurrence's draws before taking the quantiles.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from evcal.effects.draws import N_DRAWS, cov_root, joint_normals, quantiles95

if TYPE_CHECKING:  # span.py builds the links with dip_links below
    from evcal.effects.span import GroupInfo, SpanContext

__all__ = ["DipLink", "dip_links", "net_columns", "NET_LIFT_COLUMNS", "NET_OCC_COLUMNS"]

#: lifts.csv columns added when the calendar has dip periods: on a dip's row the event it belongs to;
#: on the event's row the net lift over its footprint, its interval and the net units per occurrence
NET_LIFT_COLUMNS = ["dip_of", "net_pct", "net_low_pct", "net_high_pct", "net_units_per_occurrence"]
#: occurrences.csv columns added when the calendar has dip periods (on the event's rows)
NET_OCC_COLUMNS = ["dip_units", "net_units", "net_low_units", "net_high_units", "net_pct"]


@dataclass
class DipLink:
    """An event, its dip periods, and its occurrences' rows in the span's occurrence table.

    ``rows`` is (k, 1 + len(dips)): each occurrence's row, then its dips' rows (-1 where a dip falls
    outside the span: its net is not measured).
    """

    event: str
    dips: list[str]
    rows: np.ndarray


def dip_links(calendar: Any, occs: pd.DataFrame) -> list[DipLink]:
    """The events of ``calendar`` that have dip periods, with their occurrences paired to their dips."""
    dips: dict[str, list[Any]] = {}
    for ev in getattr(calendar, "events", []):
        if getattr(ev, "dip_of", None) is not None:
            dips.setdefault(ev.dip_of.name, []).append(ev)
    links = []
    for parent, specs in dips.items():
        mine = np.flatnonzero(occs["event"].to_numpy() == parent)
        rows = np.full((len(mine), 1 + len(specs)), -1, dtype=np.int64)
        rows[:, 0] = mine
        for j, d in enumerate(specs):
            # the parent occurrence's end (start) each dip row belongs to
            key_col, shift = ("end", -(d.dip_of.after + 1)) if d.dip_side == "after" else \
                ("start", d.dip_of.before + 1)
            src = "start" if d.dip_side == "after" else "end"
            own = np.flatnonzero(occs["event"].to_numpy() == d.name)
            day = pd.to_datetime(occs[src].iloc[own]) + pd.Timedelta(days=shift)
            where = dict(zip(day.dt.strftime("%Y-%m-%d"), own, strict=True))
            rows[:, 1 + j] = [where.get(v, -1) for v in occs[key_col].iloc[mine]]
        links.append(DipLink(parent, [d.name for d in specs], rows))
    return links


def _own_x(ctx: SpanContext, group: GroupInfo, curved: dict[str, np.ndarray], m: int
           ) -> dict[int, tuple[np.ndarray, np.ndarray]]:
    """Each event occurrence row -> (its periods, its own share of its column there, (m, L))."""
    out: dict[int, tuple[np.ndarray, np.ndarray]] = {}
    for og in ctx.occ_groups:
        if og.kind != "event" or og.zero or len(og.cols) != 1:
            continue
        c = og.cols[0]
        x_sum = (curved[c][:, og.idx] if c in curved else np.broadcast_to(ctx.columns[c][og.idx], (m,
                                                                                                   *og.idx.shape)))
        # the occurrence's own share of the column, by the occurrence table's rule
        x_own = og.window_share(x_sum * og.mask)[1]
        for i, pos in enumerate(og.pos):
            keep = og.mask[i] > 0
            out[int(pos)] = (og.idx[i][keep], x_own[:, i][:, keep])
    return out


def net_columns(ctx: SpanContext, group: GroupInfo, parts: dict[str, np.ndarray], base: np.ndarray,
                pmap: dict[str, np.ndarray], se_map: dict[str, np.ndarray], cov: np.ndarray | None,
                curved: dict[str, np.ndarray], added: np.ndarray
                ) -> tuple[dict[str, np.ndarray], dict[str, dict[str, np.ndarray]]]:
    """The net columns of the occurrence table ((m, n_occ) each) and of each event's lift ((m,) each).

    ``added`` is the occurrence table's ``added_units`` as (m, n_occ).
    """
    m, n_occ = added.shape
    occ_out = {c: np.full((m, n_occ), np.nan) for c in NET_OCC_COLUMNS}
    lift_out: dict[str, dict[str, np.ndarray]] = {}
    xs = _own_x(ctx, group, curved, m)
    ints = [c for c in group.status if c in group.intervention_names and c in parts]
    open_base = base * ctx.share[None, :]
    level = open_base + sum(parts[c] for c in ints) if ints else open_base
    where = {int(pos): (og, i) for og in ctx.occ_groups for i, pos in enumerate(og.pos)}
    for link in ctx.dip_links:
        cols = [link.event, *link.dips]
        if not all(group.source(c) == c and c in pmap for c in cols):
            continue  # a coefficient the fit could not estimate: the net is not measured
        # measured where the event and every dip of the occurrence lie in the span (no -1 row)
        ok = np.array([all(int(r) in xs for r in row) for row in link.rows], dtype=bool)
        b = np.stack([pmap[c] for c in cols], axis=1)  # (m, K)
        where_cols = [group.term_cols.index(c) for c in cols]
        sub = None if cov is None else cov[:, where_cols][:, :, where_cols]
        root = cov_root(sub, se_map, cols, m)
        # the occurrence tables' own draws and seed (evcal.effects.occurrences)
        draws = b[:, None, :] + np.einsum("mkj,dj->mdk", root, joint_normals(len(cols)))  # (m, D, K)
        total_d = np.zeros((m, N_DRAWS))
        total_net, total_base = np.zeros(m), np.zeros(m)
        for row in link.rows[ok]:
            periods = np.unique(np.concatenate([xs[int(r)][0] for r in row]))
            x = np.zeros((m, len(cols), len(periods)))
            for j, r in enumerate(row):
                idx, val = xs[int(r)]
                x[:, j, np.searchsorted(periods, idx)] += val
            net = added[:, row].sum(axis=1)
            if group.transform == "none":
                g = (x * ctx.share[periods][None, None, :]).sum(axis=-1)  # (m, K) units per coefficient
                v = np.einsum("mdk,mk->md", draws, g)
                v0 = (b * g).sum(axis=1)
            else:
                lev = level[:, periods]
                v = (lev[:, None, :] * np.expm1(np.einsum("mdk,mkt->mdt", draws, x))).sum(axis=-1)
                v0 = (lev * np.expm1(np.einsum("mk,mkt->mt", b, x))).sum(axis=-1)
            v += (net - v0)[:, None]
            foot = sum((level[:, og.idx[i]] * og.mask[i] * og.wdays[i]).sum(axis=-1)
                       for og, i in (where[int(r)] for r in row))
            p = row[0]
            occ_out["dip_units"][:, p] = added[:, row[1:]].sum(axis=1)
            occ_out["net_units"][:, p] = net
            total_d += v  # before the quantiles, which partition v in place
            occ_out["net_low_units"][:, p], occ_out["net_high_units"][:, p] = quantiles95(v)
            with np.errstate(divide="ignore", invalid="ignore"):
                occ_out["net_pct"][:, p] = np.where(foot != 0, 100.0 * net / foot, np.nan)
            total_net += net
            total_base += foot
        with np.errstate(divide="ignore", invalid="ignore"):
            scale = np.where(total_base != 0, 100.0 / total_base, np.nan)
        k = int(ok.sum())
        lo, hi = quantiles95(total_d) if k else (np.full(m, np.nan),) * 2
        lift_out[link.event] = {"net_pct": total_net * scale if k else np.full(m, np.nan),
                                "net_low_pct": lo * scale, "net_high_pct": hi * scale,
                                "net_units_per_occurrence": total_net / k if k else np.full(m, np.nan)}
    return occ_out, lift_out
