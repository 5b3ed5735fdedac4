"""The hostile-input corpus, fixed-seed subset: bad and odd inputs through the real ``evcal`` process.

Issue 13's standard (its "Tests" section): 0 tracebacks, 0 exit-0 on a bad
input, 0 files changed outside ``--out`` (every input and every file in the
target folder hashed before and after; nothing at all on a refused run),
0 runs over 60 s or 2 GiB; odd but valid inputs (BOM, CRLF, comments, flow
style, semicolons, any week-ending day) stay accepted; a model folder ``fit``
wrote is read back; outputs are formula-safe and lifts never astronomic.
The cases are drawn by hypothesis strategies (``tests/corpus/``) with a fixed
seed; the full corpus (>= 700 cases) is ``benchmarks/hostile_corpus.py`` and
the ``slow`` test at the end. Inputs are the invented demo data or synthetic
series with a known truth, named as such.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from corpus import build_corpus, format_failures, format_table, run_all
from corpus.case import Case
from corpus.collect import CI, FULL
from corpus.runner import CHECKS, _astronomic, _formula_cells, _under, failures

SEED = 13  # fixed: CI always runs the same cases


@pytest.fixture(scope="module")
def ci_outcomes() -> list:
    cases = build_corpus(CI, seed=SEED)
    return run_all(cases, workers=2)


def test_the_subset_covers_every_kind_and_both_verdicts(ci_outcomes: list) -> None:
    kinds = {o.case.kind for o in ci_outcomes}
    assert kinds == set(CI)
    expects = {o.case.expect for o in ci_outcomes}
    assert {"bad", "ok"} <= expects
    assert len(ci_outcomes) >= 0.9 * sum(CI.values())


@pytest.mark.parametrize("check", list(CHECKS))
def test_no_case_fails(ci_outcomes: list, check: str) -> None:
    bad = failures(ci_outcomes)[check]
    assert not bad, (
        f"{len(bad)} case(s) failed '{CHECKS[check]}'\n"
        + format_table(ci_outcomes)
        + format_failures([o for o in ci_outcomes if check in o.failed], examples=10)
    )


# ---------------------------------------------------------------- the runner's own checks


def test_formula_cells_are_found_and_numbers_are_not(tmp_path: Path) -> None:
    # OWASP's CSV-injection guidance: text starting with = + - @ tab CR is a formula to a spreadsheet
    f = tmp_path / "lifts.csv"
    f.write_text('event,lift_pct\n"=HYPERLINK(""http://x"",""y"")",-18.5\n+x,1\n\'=safe,2\n',
                 encoding="utf-8")
    found = _formula_cells(f)
    assert len(found) == 2 and "row 2 col 1" in found[0] and "row 3 col 1" in found[1]


def test_formula_cells_in_a_workbook(tmp_path: Path) -> None:
    import openpyxl

    wb = openpyxl.Workbook()
    wb.active["A1"] = "=1+1"  # openpyxl stores text starting with = as a formula
    wb.active["A2"] = "plain"
    wb.save(tmp_path / "p.xlsx")
    assert len(_formula_cells(tmp_path / "p.xlsx")) == 1


def test_astronomic_lifts_are_found(tmp_path: Path) -> None:
    f = tmp_path / "lifts.csv"
    f.write_text("event,lift_pct,low_pct,high_pct,identifiable\n"
                 "a,5867427147,-100,inf,yes\nb,12,5,20,yes\nc,1e12,,,no\n", encoding="utf-8")
    found = _astronomic(f)
    assert len(found) == 2 and all("'a'" in x for x in found)
    # an estimated event at -100 % with no interval is degenerate; a closure at -100 % is not
    f.write_text("event,lift_pct,low_pct,high_pct,identifiable,note\n"
                 "fathers-day,-100,-100,-100,True,\nxmas,-100,-100,-100,True,closure (effect: zero)\n",
                 encoding="utf-8")
    assert [x.split()[1] for x in _astronomic(f)] == ["'fathers-day'"]


def test_under_compares_whole_path_parts() -> None:
    assert _under("m/model.json", ["m"]) and _under("m", ["m"])
    assert not _under("m2/model.json", ["m"]) and not _under("data/sales.csv", ["m"])


def test_a_plain_valid_command_passes_every_check() -> None:
    # the harness must not fail a good run: the demo calendar, checked
    from corpus import assets, run_case

    case = Case("command", "demo calendar check", ("calendar", "check", "cal.yaml"),
                (("cal.yaml", assets.demo_calendar()),), "ok")
    out = run_case(case)
    assert out.returncode == 0 and out.failed == {}, out.stderr


def test_a_read_only_folder_is_read_only_to_the_child() -> None:
    # as root, the runner drops CAP_DAC_OVERRIDE so that permissions apply to evcal as to any user;
    # without it every "read-only" case would test nothing
    from corpus import assets, run_case

    case = Case("command", "dates into a read-only folder",
                ("calendar", "dates", "cal.yaml", "--from", "2024", "--to", "2024", "--out", "ro/d.csv"),
                (("cal.yaml", assets.demo_calendar()),), "bad", dirs=("ro",), readonly=("ro",))
    out = run_case(case)
    assert out.returncode != 0


# ---------------------------------------------------------------- the full corpus


@pytest.mark.slow
def test_full_corpus() -> None:
    """All >= 700 cases (about half an hour on two cores); ``python -m pytest -m slow``."""
    outcomes = run_all(build_corpus(FULL, seed=SEED), workers=2)
    assert len(outcomes) >= 700
    bad = [o for o in outcomes if o.failed]
    assert not bad, format_table(outcomes) + format_failures(bad)
