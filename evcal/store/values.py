"""The JSON convention of evcal's folders, its value types, and the one line for a damaged folder.

JSON has no NaN or infinity and ``null`` cannot say which it was, so :func:`json_safe` writes
``"NaN"``, ``"Infinity"``, ``"-Infinity"``; they are read back only where a number may be
non-finite (:data:`Num`), never where it must be finite (:data:`Finite`). ``null`` means "absent".
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
NONFINITE = {"NaN": math.nan, "Infinity": math.inf, "-Infinity": -math.inf}


def json_safe(obj: Any) -> Any:
    """Plain JSON values: non-finite floats as text, numpy scalars as Python ones, keys as text.

    Examples
    --------
    >>> json_safe({1: float("nan"), "b": [1.5, float("-inf")]})
    {'1': 'NaN', 'b': [1.5, '-Infinity']}
    """
    if isinstance(obj, bool | np.bool_):
        return bool(obj)
    if isinstance(obj, float | np.floating):
        x = float(obj)
        return x if math.isfinite(x) else "NaN" if math.isnan(x) else "Infinity" if x > 0 else "-Infinity"
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, dict):
        return {str(k): json_safe(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [json_safe(v) for v in obj]
    return obj


def dumps(obj: Any) -> str:
    """``obj`` as JSON text in the folder's convention (never a bare NaN token), as :func:`json_safe`."""
    return json.dumps(json_safe(obj), indent=1, allow_nan=False)


def shown(v: Any) -> str:
    """A value as a line shows it: JSON text, clipped to 60 characters."""
    try:
        return clip(json.dumps(v), 60)
    except (TypeError, ValueError):
        return clip(repr(v), 60)


def fail(path: Path | str, key: str, what: str) -> ModelError:
    """``<file>: <key>: <what is wrong>; re-run evcal fit ...``"""
    return ModelError(f"{path}: {key}: {what}; {AGAIN}")


def _number(v: Any) -> float:
    if isinstance(v, str) and v in NONFINITE:
        return NONFINITE[v]
    if isinstance(v, bool) or not isinstance(v, int | float):
        raise ValueError(f"{shown(v)} is not a number")
    return float(v)


def _rules(*rules: tuple[Any, str]) -> BeforeValidator:
    """A number (as :func:`_number` reads it) that passes every ``(test, what is wrong)`` of ``rules``."""

    def check(v: Any) -> float:
        x = _number(v)
        for test, what in rules:
            if not test(x):
                raise ValueError(f"{shown(v)} {what}")
        return x

    return BeforeValidator(check)


def _whole(v: Any) -> int:
    if isinstance(v, bool) or not isinstance(v, int):
        raise ValueError(f"{shown(v)} is not a whole number")
    return v


def _iso_day(v: Any) -> str:
    if not isinstance(v, str):
        raise ValueError(f"{shown(v)} is not a date")
    try:
        if len(v) != 10 or pd.isna(pd.Timestamp(v)):
            raise ValueError
    except (ValueError, OverflowError):
        raise ValueError(f"{shown(v)} is not an ISO date (YYYY-MM-DD)") from None
    return v


_FINITE = (math.isfinite, "is not a finite number")
#: a number that may be NaN or infinite (written as "NaN", "Infinity", "-Infinity")
Num = Annotated[float, BeforeValidator(_number)]
Finite = Annotated[float, _rules(_FINITE)]
NonNeg = Annotated[float, _rules(_FINITE, (lambda x: x >= 0, "is negative; it must be 0 or more"))]
Positive = Annotated[float, _rules(_FINITE, (lambda x: x > 0, "must be a positive number"))]
Whole = Annotated[int, BeforeValidator(_whole)]
Day = Annotated[str, BeforeValidator(_iso_day)]
#: a count (kept whole) or any number
CountOrNum = Annotated[int | float, BeforeValidator(lambda v: _whole(v) if type(v) is int else _number(v))]


class Strict(BaseModel):
    """A JSON object with exactly these keys, of exactly these types (``"7.5"`` is not a number)."""

    model_config = ConfigDict(strict=True, extra="forbid")


def _reason(e: dict[str, Any]) -> str:
    if e["type"] == "missing":
        return "missing"
    if e["type"] == "extra_forbidden":
        return "is not a key of this format"
    if e["type"] == "value_error":
        return str(e.get("ctx", {}).get("error", e["msg"]))
    return f"{shown(e.get('input'))}: {str(e['msg']).replace('Input should be', 'should be')}"


def validation_line(path: Path | str, err: ValidationError) -> str:
    """The first problem of a pydantic error as one line: file, key, what is wrong."""
    errors = err.errors()
    key = ""
    for p in errors[0]["loc"]:  # a tagged union's branch name (arima, ...) is not a key of the file
        if p not in ("iid", "poisson", "negative_binomial", "arima"):
            key += f"[{p}]" if isinstance(p, int) else ("." if key else "") + str(p)
    more = f" (and {len(errors) - 1} more problem(s))" if len(errors) > 1 else ""
    return f"{path}: {key or '(top)'}: {_reason(errors[0])}{more}; {AGAIN}"


def _bare_constant(token: str) -> float:
    raise ValueError(f"bare {token} is not JSON (write \"{token}\" as a string)")


def read_json(path: Path) -> dict[str, Any]:
    """A folder's JSON document as a dict (bare ``NaN``/``Infinity`` tokens refused); one line if not."""
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
