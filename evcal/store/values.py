"""The JSON convention of evcal's folders and the one-line error for a damaged one.

Non-finite numbers. JSON has no NaN or infinity, and a bare ``null`` cannot
say which it was, so the writer (:func:`json_safe`) puts the strings
``"NaN"``, ``"Infinity"`` and ``"-Infinity"`` where a float is not finite,
and the reader accepts those three strings only where the schema allows a
non-finite number (:data:`Num`). Where a number must be finite (:data:`Finite`)
they are refused like any other bad value. ``null`` means "absent" and is
accepted only where a value may be absent. In the CSVs a missing number is an
empty cell (pandas' convention); ``inf``/``-inf`` are written as such.

Examples
--------
>>> json_safe({"a": float("nan"), "b": [1.5, float("-inf")]})
{'a': 'NaN', 'b': [1.5, '-Infinity']}
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Annotated, Any

import numpy as np
import pandas as pd
from pydantic import BaseModel, BeforeValidator, ConfigDict, ValidationError

from evcal.errors import ModelError, clip

#: the advice that ends every line about a damaged folder
AGAIN = "re-run evcal fit to write the folder again"
#: the writer's spelling of the floats JSON cannot hold
NONFINITE = {"NaN": math.nan, "Infinity": math.inf, "-Infinity": -math.inf}


def json_safe(obj: Any) -> Any:
    """Plain JSON values: non-finite floats as ``"NaN"``/``"Infinity"``/``"-Infinity"``, numpy scalars
    as Python ones, keys as text (the one writer of the convention the reader takes back).

    Examples
    --------
    >>> json_safe({1: float("inf")})
    {'1': 'Infinity'}
    """
    if isinstance(obj, bool | np.bool_):
        return bool(obj)
    if isinstance(obj, float | np.floating):
        x = float(obj)
        if math.isnan(x):
            return "NaN"
        return ("Infinity" if x > 0 else "-Infinity") if math.isinf(x) else x
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, dict):
        return {str(k): json_safe(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [json_safe(v) for v in obj]
    return obj


def dumps(obj: Any) -> str:
    """``obj`` as JSON text in the folder's convention (never a bare NaN token).

    Examples
    --------
    >>> dumps({"x": float("nan")})
    '{\\n "x": "NaN"\\n}'
    """
    return json.dumps(json_safe(obj), indent=1, allow_nan=False)


def shown(v: Any) -> str:
    """A value as a line shows it: JSON text, clipped to 60 characters."""
    if v is None:
        return "null"
    try:
        return clip(json.dumps(v), 60)
    except (TypeError, ValueError):
        return clip(repr(v), 60)


def fail(path: Path | str, key: str, what: str) -> ModelError:
    """The one line for a damaged folder: ``<file>: <key>: <what is wrong>; re-run evcal fit ...``."""
    return ModelError(f"{path}: {key}: {what}; {AGAIN}")


# ---------------------------------------------------------------- value types


def _number(v: Any) -> float:
    if isinstance(v, str) and v in NONFINITE:
        return NONFINITE[v]
    if isinstance(v, bool) or not isinstance(v, int | float):
        raise ValueError(f"{shown(v)} is not a number")
    return float(v)


def _finite(v: Any) -> float:
    x = _number(v)
    if not math.isfinite(x):
        raise ValueError(f"{shown(v)} is not a finite number")
    return x


def _nonneg(v: Any) -> float:
    x = _finite(v)
    if x < 0:
        raise ValueError(f"{shown(v)} is negative; it must be 0 or more")
    return x


def _positive(v: Any) -> float:
    x = _finite(v)
    if x <= 0:
        raise ValueError(f"{shown(v)} must be a positive number")
    return x


def _whole(v: Any) -> int:
    if isinstance(v, bool) or not isinstance(v, int):
        raise ValueError(f"{shown(v)} is not a whole number")
    return v


def _count_or_number(v: Any) -> int | float:
    return v if isinstance(v, int) and not isinstance(v, bool) else _number(v)


def _iso_day(v: Any) -> str:
    if not isinstance(v, str):
        raise ValueError(f"{shown(v)} is not a date")
    try:
        pd.Timestamp(v)
        if len(v) != 10:
            raise ValueError
    except (ValueError, OverflowError):
        raise ValueError(f"{shown(v)} is not an ISO date (YYYY-MM-DD)") from None
    return v


#: a number that may be NaN or infinite (written as "NaN", "Infinity", "-Infinity")
Num = Annotated[float, BeforeValidator(_number)]
#: a number that must be finite
Finite = Annotated[float, BeforeValidator(_finite)]
NonNeg = Annotated[float, BeforeValidator(_nonneg)]
Positive = Annotated[float, BeforeValidator(_positive)]
Whole = Annotated[int, BeforeValidator(_whole)]
Day = Annotated[str, BeforeValidator(_iso_day)]
#: a count (kept whole) or any number
CountOrNum = Annotated[int | float, BeforeValidator(_count_or_number)]


class Strict(BaseModel):
    """A JSON object with exactly these keys, of exactly these types (``"7.5"`` is not a number)."""

    model_config = ConfigDict(strict=True, extra="forbid")


# ---------------------------------------------------------------- reading


def _key(loc: tuple[Any, ...]) -> str:
    parts: list[str] = []
    for p in loc:
        if isinstance(p, int):
            parts.append(f"[{p}]")
        elif p in ("iid", "poisson", "negative_binomial", "arima"):
            continue  # the tagged union's branch name is not a key of the file
        else:
            parts.append(("." if parts else "") + str(p))
    return "".join(parts) or "(top)"


def _reason(e: dict[str, Any]) -> str:
    kind = e["type"]
    if kind == "missing":
        return "missing"
    if kind == "extra_forbidden":
        return "is not a key of this format"
    if kind == "value_error":
        return str(e.get("ctx", {}).get("error", e["msg"]))
    return f"{shown(e.get('input'))}: {str(e['msg']).replace('Input should be', 'should be')}"


def validation_line(path: Path | str, err: ValidationError) -> str:
    """The first problem of a pydantic error as one line: file, key, what is wrong."""
    errors = err.errors()
    more = f" (and {len(errors) - 1} more problem(s))" if len(errors) > 1 else ""
    return f"{path}: {_key(errors[0]['loc'])}: {_reason(errors[0])}{more}; {AGAIN}"


def _bare_constant(token: str) -> float:
    raise ValueError(f"bare {token} is not JSON (write \"{token}\" as a string)")


def read_json(path: Path) -> dict[str, Any]:
    """Parse a JSON file of a folder (bare ``NaN``/``Infinity`` tokens refused) into a dict.

    Examples
    --------
    >>> read_json(Path("models/garden/model.json"))["freq"]       # doctest: +SKIP
    'W-SUN'
    """
    try:
        data = json.loads(path.read_text(encoding="utf-8"), parse_constant=_bare_constant)
    except json.JSONDecodeError as err:
        raise ModelError(f"{path}: line {err.lineno}: not valid JSON ({err.msg}); {AGAIN}") from None
    except ValueError as err:
        raise ModelError(f"{path}: not valid JSON ({err}); {AGAIN}") from None
    except RecursionError:  # lists in lists far deeper than anything evcal writes (3 levels)
        raise ModelError(f"{path}: nested far too deeply to be a file evcal wrote; {AGAIN}") from None
    except (OSError, UnicodeDecodeError) as err:
        raise ModelError(f"{path}: cannot be read ({clip(str(err), 120)})") from None
    if not isinstance(data, dict):
        raise ModelError(f"{path}: expected a JSON object at the top, found {type(data).__name__}; {AGAIN}")
    return data
