"""Tables as named columns: the blocks' tables are joined column by column, one frame at the end.

A frame per block and a ``pandas.concat`` of them cost more than the numbers in them.
"""

from __future__ import annotations

import functools
from typing import Any

import numpy as np
import pandas as pd

__all__ = ["Columns", "n_rows", "join_columns", "join_tables", "text_dtype", "tiled_text"]


class Columns(dict[str, Any]):
    """A table as named columns of equal length (arrays or categoricals)."""

    def frame(self) -> pd.DataFrame:
        return pd.DataFrame(dict(self))


def n_rows(table: pd.DataFrame | Columns) -> int:
    if isinstance(table, Columns):
        return len(next(iter(table.values()))) if table else 0
    return len(table)


def join_columns(parts: list[pd.DataFrame | Columns]) -> Columns | None:
    """The blocks' tables joined column by column, in order; None unless all are alike ``Columns``."""
    parts = [t for t in parts if n_rows(t)]
    if not parts or not all(isinstance(t, Columns) for t in parts) or len({tuple(t) for t in parts}) > 1:
        return None
    if len(parts) == 1:
        return parts[0]  # type: ignore[return-value]
    out = Columns()
    for c in parts[0]:
        vals = [t[c] for t in parts]
        if isinstance(vals[0], pd.Categorical):
            if any(not isinstance(v, pd.Categorical) or v.dtype != vals[0].dtype for v in vals):
                return None  # text with other categories: pandas joins those frames
            out[c] = pd.Categorical.from_codes(np.concatenate([v.codes for v in vals]), dtype=vals[0].dtype,
                                               validate=False)
        else:
            out[c] = np.concatenate([np.asarray(v) for v in vals])
    return out


def join_tables(parts: list[pd.DataFrame | Columns], columns: list[str]) -> pd.DataFrame:
    """One frame from the blocks' tables, in order (``columns`` when there are no rows)."""
    joined = join_columns(parts)
    if joined is not None:
        return joined.frame()
    frames = [t.frame() if isinstance(t, Columns) else t for t in parts if n_rows(t)]
    return pd.concat(frames, ignore_index=True) if frames else pd.DataFrame(columns=columns)


def tiled_text(values: list[Any], m: int) -> pd.Categorical:
    """``values`` repeated for m series, as a categorical (one copy of each text)."""
    position = {v: i for i, v in enumerate(dict.fromkeys(values))}
    cats = tuple(position)
    codes = np.fromiter((position[v] for v in values), dtype=np.int32, count=len(values))
    # the codes are made here, in range by construction: no need to check them again
    return pd.Categorical.from_codes(np.tile(codes, m), dtype=text_dtype(cats), validate=False)


@functools.lru_cache(maxsize=256)
def text_dtype(cats: tuple[Any, ...]) -> pd.CategoricalDtype:
    return pd.CategoricalDtype(pd.Index(list(cats), dtype=object))

