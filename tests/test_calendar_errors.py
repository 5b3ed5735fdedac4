"""Every bad-input case of the calendar file, through the CLI.

Each must give exit code 2, one line per problem naming the file, the line and
the key (what is wrong; what would be right), and no traceback. The expected
messages are this project's own wording (no outside source).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from typer.testing import CliRunner

from evcal.cli import app

runner = CliRunner()

GOOD_EVENT = "  - {name: ok, when: {easter: 0}}\n"

# (case id, file text, [(line, key path, words in the message), ...])
CASES: list[tuple[str, str, list[tuple[int, str, str]]]] = [
    (
        "yaml-syntax",
        "name: t\nevents:\n  - name: a\n    when: {easter: -2\n  - name: b\n",
        [(5, "YAML syntax", "flow mapping started at line 4")],
    ),
    (
        "yaml-indentation",
        "name: t\nevents:\n  - name: a\n   when: {easter: 1}\n",
        [(4, "YAML syntax", "same column")],
    ),
    (
        "unknown-key",
        "name: t\nevents:\n  - name: a\n    when: {easter: 0}\n    lenght: 3\n",
        [(5, "events[a].lenght", "did you mean `length`")],
    ),
    (
        "unknown-rule-key",
        "name: t\nevents:\n  - name: a\n    when: {eastr: 0}\n",
        [(4, "events[a].when.eastr", "did you mean `easter`")],
    ),
    (
        "unknown-top-key",
        "name: t\nevnts:\n" + GOOD_EVENT,
        [(2, "evnts", "did you mean `events`")],
    ),
    (
        "two-rules",
        "name: t\nevents:\n  - name: a\n    when: {easter: -2, fixed: '12-24'}\n",
        [(4, "events[a].when", "keep exactly one")],
    ),
    (
        "impossible-date",
        "name: t\nevents:\n  - name: a\n    when:\n      dates: [2023-02-30]\n",
        [(5, "events[a].when.dates[#1].start", "February 2023 has 28 days")],
    ),
    (
        "impossible-month-day",
        "name: t\nevents:\n  - name: a\n    when: {fixed: '04-31'}\n",
        [(4, "events[a].when.fixed", "April has 30 days")],
    ),
    (
        "nth-out-of-range",
        "name: t\nevents:\n  - name: a\n    when: {weekday: {month: 5, day: mon, nth: 6}}\n",
        [(4, "events[a].when.weekday.nth", "1..5")],
    ),
    (
        "nth-zero",
        "name: t\nevents:\n  - name: a\n    when:\n      weekday: {month: 5, day: mon, nth: 0}\n",
        [(5, "events[a].when.weekday.nth", "-1 = last")],
    ),
    (
        "bad-weekday",
        "name: t\nevents:\n  - name: a\n    when:\n      weekday:\n        month: 5\n"
        "        day: funday\n        nth: 1\n",
        [(7, "events[a].when.weekday.day", "not a weekday")],
    ),
    (
        "unknown-country",
        "name: t\npublic_holidays:\n  country: Germny\n",
        [(3, "public_holidays.country", "did you mean DE (Germany)")],
    ),
    (
        "unknown-subdivision",
        "name: t\npublic_holidays:\n  country: GB\n  subdivision: XX\n",
        [(4, "public_holidays.subdivision", "not a subdivision of GB")],
    ),
    (
        "unknown-only-name",
        "name: t\npublic_holidays:\n  country: GB\n  only:\n    - Good Friday\n"
        "    - Boxing Dya\n",
        [(6, "public_holidays.only[#2]", "did you mean 'Boxing Day'")],
    ),
    (
        "unknown-holiday-name",
        "name: t\npublic_holidays: {country: GB, subdivision: ENG, only: [Good Friday]}\n"
        "events:\n  - name: shut\n    when: {holiday: Christmass Day}\n",
        [(5, "events[shut].when.holiday", "did you mean 'Christmas Day'")],
    ),
    (
        "duplicate-names",
        "name: t\nevents:\n  - {name: a, when: {easter: 0}}\n  - {name: a, when: {easter: 1}}\n",
        [(4, "events[a].name", "used twice (first at line 3)")],
    ),
    (
        "like-missing",
        "name: t\nevents:\n  - name: a\n    when: {easter: 0}\n    effect: {like: spring}\n",
        [(5, "events[a].effect.like", "'spring' is not an event")],
    ),
    (
        "end-before-start",
        "name: t\nevents:\n  - name: a\n    when:\n      dates:\n"
        "        - {start: 2024-03-10, end: 2024-03-01}\n"
        "exclude:\n  - {start: 2024-05-01, end: 2024-04-01, reason: stock-out}\n",
        [
            (6, "events[a].when.dates[#1]", "end 2024-03-01 is before start 2024-03-10"),
            (8, "exclude[#1]", "end must be on or after start"),
        ],
    ),
    (
        "moved-wrong-year",
        "name: t\nevents:\n  - name: cup\n    when: {span: {start: '06-14', end: '07-15'}}\n"
        "    years: {every: 4, start: 2018}\n    moved:\n"
        "      2021: {start: 2021-11-20, end: 2021-12-18}\n",
        [(7, "events[cup].moved.2021", "not a year this event occurs in")],
    ),
    (
        "empty-file",
        "",
        [(1, "(top level)", "the file is empty")],
    ),
    (
        "comments-only",
        "# nothing yet\n\n",
        [(1, "(top level)", "the file is empty")],
    ),
    (
        "top-level-list",
        "- name: a\n- name: b\n",
        [(1, "(top level)", "not a block of keys")],
    ),
    (
        "top-level-scalar",
        "just some words\n",
        [(1, "(top level)", "not a block of keys")],
    ),
    (
        "python-tag",
        "name: t\nevents: !!python/object/apply:os.system ['echo hacked > {marker}']\n",
        [(2, "events", "YAML tag '!!python/object/apply:os.system' is not allowed")],
    ),
    (
        "missing-name-and-when",
        "events:\n  - {name: a}\n",
        [(1, "name", "`name` is missing"), (2, "events[a].when", "`when` is missing")],
    ),
    (
        "bad-values",
        "name: t\nevents:\n  - name: a\n    when: {easter: 0}\n    shape: ramps\n"
        "    years: {every: 4}\n    effect: {assume: lots}\n    before: -1\n",
        [
            (5, "events[a].shape", "did you mean 'ramp'"),
            (6, "events[a].years", "needs both `every` and `start`"),
            (7, "events[a].effect", "not a percentage"),
            (8, "events[a].before", "must be from 0 to 366"),
        ],
    ),
    (
        "intervention-problems",
        "name: t\ninterventions:\n  - {name: refit, type: ramp, start: 2022-01-01}\n"
        "  - {name: hot, type: temporary, start: 2022-07-18, decay: 1.5}\n"
        "  - {name: x, type: jump, start: 2022-07-18}\n",
        [
            (3, "interventions[refit]", "a ramp needs `end`"),
            (4, "interventions[hot].decay", "between 0 and 1"),
            (5, "interventions[x].type", "use one of pulse, level_shift, temporary, ramp"),
        ],
    ),
    (
        "event-not-a-mapping",
        "name: t\nevents:\n  - spring-weekend\n",
        [(3, "events[#1]", "expected a block of `key: value` lines")],
    ),
    (
        "events-not-a-list",
        "name: t\nevents: spring-weekend\n",
        [(2, "events", "expected a list")],
    ),
    (
        "duplicate-key",
        "name: t\nname: u\n",
        [(2, "name", "appears twice")],
    ),
]


def _run(tmp_path: Path, case: str, text: str) -> tuple[Path, object]:
    path = tmp_path / f"{case}.yaml"
    path.write_text(text.replace("{marker}", str(tmp_path / "marker")), encoding="utf-8")
    return path, runner.invoke(app, ["calendar", "check", str(path)])


@pytest.mark.parametrize(("case", "text", "expected"), CASES, ids=[c[0] for c in CASES])
def test_bad_calendar_gives_one_line_per_problem(
    tmp_path: Path, case: str, text: str, expected: list[tuple[int, str, str]]
) -> None:
    path, result = _run(tmp_path, case, text)
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    assert result.exception is None or isinstance(result.exception, SystemExit)
    lines = result.stderr.strip().splitlines()
    assert len(lines) == len(expected), lines
    for line, (lineno, key, words) in zip(lines, expected, strict=True):
        prefix = f"error: {path}:{lineno}: {key}: "
        assert line.startswith(prefix), (line, prefix)
        assert words in line, (line, words)
        # "what is wrong; what would be right"
        assert ";" in line[len(prefix):], line
    assert result.stdout == ""


def test_python_tag_is_never_executed(tmp_path: Path) -> None:
    text = dict((c[0], c[1]) for c in CASES)["python-tag"]
    _run(tmp_path, "python-tag", text)
    assert not (tmp_path / "marker").exists()


def test_many_problems_in_one_file_are_all_listed(tmp_path: Path) -> None:
    text = (
        "name: t\n"
        "public_holidays: {country: GB, only: [Easter Munday]}\n"  # 2
        "events:\n"
        "  - {name: a, when: {easter: -2, fixed: '12-24'}}\n"  # 4
        "  - {name: b, lenght: 3, when: {fixed: '02-30'}}\n"  # 5 (two problems)
        "  - {name: a, when: {dates: [2023-02-30]}}\n"  # 6 (two problems)
        "  - {name: c, when: {easter: 0}, effect: {like: nobody}}\n"  # 7
    )
    path, result = _run(tmp_path, "many", text)
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    numbers = [int(re.match(rf"error: {re.escape(str(path))}:(\d+): ", ln).group(1))
               for ln in lines]
    assert numbers == [2, 4, 5, 5, 6, 6, 7], lines


def test_missing_file_and_folder(tmp_path: Path) -> None:
    result = runner.invoke(app, ["calendar", "check", str(tmp_path / "nope.yaml")])
    assert result.exit_code == 2 and "no such file" in result.stderr
    result = runner.invoke(app, ["calendar", "dates", str(tmp_path), "--from", "2024",
                                 "--to", "2025"])
    assert result.exit_code == 2 and "is a folder" in result.stderr
    assert "Traceback" not in result.output


def test_dates_with_bad_years(tmp_path: Path) -> None:
    path = tmp_path / "ok.yaml"
    path.write_text("name: t\nevents:\n" + GOOD_EVENT)
    result = runner.invoke(app, ["calendar", "dates", str(path), "--from", "2026", "--to",
                                 "2024"])
    assert result.exit_code == 2
    assert "--to 2024 is before --from 2026" in result.stderr


def test_real_process_prints_no_traceback(tmp_path: Path) -> None:
    import subprocess
    import sys

    path = tmp_path / "bad.yaml"
    path.write_text("name: t\nevents:\n  - {name: a, when: {fixed: '02-30'}}\n")
    proc = subprocess.run(
        [sys.executable, "-m", "evcal.cli", "calendar", "check", str(path)],
        capture_output=True, text=True, timeout=120,
    )
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert proc.stderr.splitlines() == [
        f"error: {path}:3: events[a].when.fixed: \"02-30\" is not a day of the year "
        "(February has at most 29 days); write a real \"MM-DD\""
    ]


NULL_RULES = [
    ("easter", "the days from Easter Sunday, e.g. easter: -2"),
    ("orthodox_easter", "the days from Orthodox Easter Sunday, e.g. orthodox_easter: 0"),
    ("fixed", 'a month-day, e.g. fixed: "12-24"'),
    ("weekday", "a month, weekday and position, e.g. weekday: {month: 5, day: mon, nth: -1}"),
    ("holiday", "the name of a public holiday, e.g. holiday: Christmas Day"),
    ("span", 'the first and last month-day, e.g. span: {start: "12-24", end: "01-01"}'),
    ("every_weekday", "one or more weekdays, e.g. every_weekday: [sun]"),
    ("dates", "at least one date, e.g. dates: [2024-03-29]"),
]


@pytest.mark.parametrize(("key", "right"), NULL_RULES, ids=[k for k, _ in NULL_RULES])
def test_rule_key_with_null_value(tmp_path: Path, key: str, right: str) -> None:
    path, result = _run(tmp_path, key, f"name: t\nevents:\n  - name: a\n    when: {{{key}: null}}\n")
    assert result.exit_code == 2, result.output
    assert result.exception is None or isinstance(result.exception, SystemExit)
    assert "Traceback" not in result.output
    assert result.stderr.splitlines() == [
        f"error: {path}:4: events[a].when.{key}: `{key}` has no value; write {right}"
    ]


def test_rule_key_left_empty_in_block_style(tmp_path: Path) -> None:
    path, result = _run(tmp_path, "empty", "name: t\nevents:\n  - name: a\n    when:\n      easter:\n")
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [
        f"error: {path}:5: events[a].when.easter: `easter` has no value; "
        "write the days from Easter Sunday, e.g. easter: -2"
    ]
