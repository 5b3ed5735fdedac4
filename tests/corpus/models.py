"""Model-folder strategies: a real folder (fitted by the code under test on the demo data), then
edited or damaged, and read by ``show``, ``plan`` or ``report``.

A damaged folder must be refused with one line naming the file and the key,
never planned from; harmless edits (a label, the JSON layout) stay accepted.
"""

from __future__ import annotations

import json
from typing import Any

from hypothesis import strategies as st

from corpus import assets
from corpus.calendars import billion_laughs
from corpus.case import Case

MODEL = "model"


def _model_json() -> dict[str, Any]:
    return json.loads(dict(assets.base_model())["model.json"])


def _top_keys() -> list[str]:
    return list(_model_json())


def _nest(depth: int) -> str:
    return "[" * depth + "]" * depth


#: (name, verdict, function(dict) -> dict | bytes); a bytes result is the whole model.json
JsonDamage = tuple[str, str, Any]


def _assign(key: str, value: Any):
    def apply(d: dict[str, Any]) -> dict[str, Any]:
        d[key] = value
        return d

    return apply


def _inner(key: str, sub: str, value: Any):
    def apply(d: dict[str, Any]) -> dict[str, Any]:
        d[key][sub] = value
        return d

    return apply


def _drop(key: str):
    def apply(d: dict[str, Any]) -> dict[str, Any]:
        d.pop(key, None)
        return d

    return apply


def _param(which: str, value: Any):
    def apply(d: dict[str, Any]) -> dict[str, Any]:
        names = list(d["params"])
        name = names[0] if which == "first" else names[-1] if which == "last" else which
        d["params"][name] = value
        return d

    return apply


def _drop_param(d: dict[str, Any]) -> dict[str, Any]:
    d["params"].pop(list(d["params"])[-1])
    return d


def _cov_row(d: dict[str, Any]) -> dict[str, Any]:
    d["cov"]["values"] = d["cov"]["values"][:-1]
    return d


def _cov_cell(value: Any):
    def apply(d: dict[str, Any]) -> dict[str, Any]:
        d["cov"]["values"][0][0] = value
        return d

    return apply


def _cov_columns(d: dict[str, Any]) -> dict[str, Any]:
    d["cov"]["columns"] = list(reversed(d["cov"]["columns"]))[:-1] + ["not-a-column"]
    return d


def _share_null(d: dict[str, Any]) -> dict[str, Any]:
    key = next(iter(d["average_share"]))
    d["average_share"][key] = None
    return d


def _history_swap(d: dict[str, Any]) -> dict[str, Any]:
    h = d["history"]
    h["start"], h["end"] = h["end"], h["start"]
    return d


def json_damages() -> list[JsonDamage]:
    out: list[JsonDamage] = []
    for key in _top_keys():
        out.append((f"model.json {key}: null", "bad", _assign(key, None)))
        out.append((f"model.json {key}: removed", "bad", _drop(key)))
        out.append((f"model.json {key}: a list", "bad", _assign(key, [1, "x"])))
    out += [
        ("params const: null", "bad", _param("const", None)),
        ("params first: null", "bad", _param("first", None)),
        ("params last: text", "bad", _param("last", "NaN")),
        ("params const: 1e308", "any", _param("const", 1e308)),
        ("params: one removed", "bad", _drop_param),
        ("params: one added", "bad", _param("made-up-term", 0.5)),
        ("cov: one row short", "bad", _cov_row),
        ("cov: a null cell", "bad", _cov_cell(None)),
        ("cov: a text cell", "bad", _cov_cell("x")),
        ("cov: columns not the params", "bad", _cov_columns),
        ("cov values: null", "bad", _inner("cov", "values", None)),
        ("average_share: a null", "bad", _share_null),
        ("history start after end", "bad", _history_swap),
        ("history start not a date", "bad", _inner("history", "start", "yesterday")),
        ("transform sqrt", "bad", _assign("transform", "sqrt")),
        ("sigma2 -1", "bad", _assign("sigma2", -1.0)),
        ("sigma2 text", "bad", _assign("sigma2", "big")),
        ("smear 0", "any", _assign("smear", 0.0)),
        ("calendar_text empty", "bad", _assign("calendar_text", "")),
        ("calendar_text not YAML", "bad", _assign("calendar_text", "events: [unclosed")),
        ("calendar_text billion laughs", "bad", _assign("calendar_text", billion_laughs(10))),
        ("format_version 2", "bad", _assign("format_version", 2)),
        ("format_version '1'", "bad", _assign("format_version", "1")),
        ("label renamed", "ok", _assign("label", "renamed by hand")),
        ("warnings emptied", "ok", _assign("warnings", [])),
        ("an unknown key added", "any", _assign("x-note", "hand-written")),
        ("keys in reverse order", "ok", lambda d: dict(reversed(list(d.items())))),
        ("reformatted (indent 4)", "ok", lambda d: json.dumps(d, indent=4).encode()),
        ("reformatted (one line)", "ok", lambda d: json.dumps(d, separators=(",", ":")).encode()),
        ("truncated", "bad", lambda d: json.dumps(d).encode()[: len(json.dumps(d)) // 2]),
        ("empty", "bad", lambda d: b""),
        ("a JSON list", "bad", lambda d: b"[]"),
        (
            "a NaN literal",
            "bad",
            lambda d: json.dumps(d).replace('"sigma2": ', '"sigma2": NaN, "x": ', 1).encode(),
        ),
        (
            "Infinity in params",
            "bad",
            lambda d: json.dumps(d).replace('"params": {', '"params": {"const": Infinity, ', 1).encode(),
        ),
        ("100,000 nested lists", "bad", lambda d: _nest(100_000).encode()),
        (
            "latin-1 bytes",
            "bad",
            lambda d: (
                json.dumps(d, ensure_ascii=False)
                .replace('"label": "', '"label": "caf\xe9 ', 1)
                .encode("latin-1", "replace")
            ),
        ),
    ]
    for freq in ("D", "M", "W-SAT", "Q-DEC", "X", ""):
        out.append((f"freq edited to {freq!r}", "bad", _assign("freq", freq)))
    return out


#: (name, verdict, file, new bytes or None to delete, or "dir" to make it a folder)
def file_damages() -> list[tuple[str, str, str, Any]]:
    out: list[tuple[str, str, str, Any]] = []
    for f in ("lifts.csv", "occurrences.csv", "profile.csv", "fitted.csv", "model.json"):
        out.append((f"{f} deleted", "bad", f, None))
        out.append((f"{f} is a folder", "bad", f, "dir"))
        if f.endswith(".csv"):
            out.append((f"{f} empty", "bad", f, b""))
            out.append((f"{f} garbage bytes", "bad", f, bytes(range(256)) * 8))
    out += [
        ("lifts.csv header only", "bad", "lifts.csv", "header"),
        ("profile.csv header only", "bad", "profile.csv", "header"),
        ("fitted.csv header only", "bad", "fitted.csv", "header"),
        ("lifts.csv a column dropped", "bad", "lifts.csv", "dropcol"),
        ("profile.csv text index", "bad", "profile.csv", "textcol"),
    ]
    return out


def _csv_edit(data: bytes, how: str) -> bytes:
    lines = data.decode("utf-8").splitlines()
    if how == "header":
        return (lines[0] + "\n").encode()
    if how == "dropcol":
        return "".join(",".join(ln.split(",")[:-2]) + "\n" for ln in lines).encode()
    if how == "textcol":
        return "".join(
            (ln if i == 0 else ",".join([*ln.split(",")[:-1], "abc"])) + "\n" for i, ln in enumerate(lines)
        ).encode()
    raise ValueError(how)  # pragma: no cover


def _commands() -> list[tuple[str, tuple[str, ...], tuple[str, ...]]]:
    y = str(assets.PLAN_YEAR)
    return [
        ("show", ("show", MODEL), ()),
        (
            "plan",
            (
                "plan",
                MODEL,
                "--from",
                f"{y}-01-01",
                "--to",
                f"{y}-12-31",
                "--sims",
                "20",
                "--out",
                "plan.csv",
            ),
            ("plan.csv",),
        ),
        (
            "plan",
            (
                "plan",
                MODEL,
                "--from",
                f"{y}-01-01",
                "--to",
                f"{y}-12-31",
                "--sims",
                "20",
                "--out",
                "plan.csv",
            ),
            ("plan.csv",),
        ),
        ("report", ("report", MODEL, "--out", "report.html"), ("report.html",)),
    ]


@st.composite
def model_cases(draw: st.DrawFn) -> Case:
    """A model folder, damaged or edited, read by one command."""
    files = dict(assets.base_model())
    dirs: tuple[str, ...] = ()
    if draw(st.integers(0, 2)):
        name, verdict, fn = draw(st.sampled_from(json_damages()))
        result = fn(_model_json())
        files["model.json"] = result if isinstance(result, bytes) else json.dumps(result, indent=1).encode()
    else:
        name, verdict, target, change = draw(st.sampled_from(file_damages()))
        if change is None:
            files.pop(target)
        elif change == "dir":
            files.pop(target)
            dirs = (f"{MODEL}/{target}",)
        elif isinstance(change, str):
            files[target] = _csv_edit(files[target], change)
        else:
            files[target] = change
    command, argv, writes = draw(st.sampled_from(_commands()))
    return Case(
        "model",
        f"model {command}: {name}",
        argv,
        tuple((f"{MODEL}/{p}", b) for p, b in sorted(files.items())),
        verdict,
        writes,
        dirs=dirs,
    )
