"""The options of ``evcal plan`` that cannot go together, or with the model folder given: one line each.

Every check runs before ``--out`` is looked at or a model is read, so a refused command writes
nothing. An option a path of ``plan`` would not use is refused rather than dropped: a plan made
without it would look like an answer to the question the user asked.
"""

from __future__ import annotations

from dataclasses import dataclass

from evcal.errors import PlanError

__all__ = ["PlanOptions", "refuse_combinations", "refuse_with_scenarios"]


@dataclass
class PlanOptions:
    """The options of ``evcal plan`` whose combinations are checked (None or empty: not given).

    Examples
    --------
    >>> refuse_combinations(PlanOptions(model_dir="model", panel=False))  # nothing refused
    """

    model_dir: str
    panel: bool
    scenario: list[str] | None = None
    compare: str | None = None
    compare_drivers: str | None = None
    calendar: str | None = None
    actuals: str | None = None
    reconcile: list[str] | None = None
    reconcile_method: str | None = None
    allocate: str | None = None
    series: list[str] | None = None
    workers: int | None = None


#: what each panel-only option does, and what to use on a one-series model folder instead
_PANEL_ONLY = {
    "allocate": ("--allocate", "allocate from a panel fitted with --level (docs/scale.md), e.g. evcal plan "
                 "models/products --allocate models/items; or plan this model and give its plan's total to "
                 "the child panel with --total"),
    "series": ("--series", "it picks series of a panel model, and this model plans its one series; leave out "
               "--series"),
    "workers": ("--workers", "it spreads a panel's series over processes, and one series plans on one; leave "
                "out --workers"),
}


def refuse_with_scenarios(o: PlanOptions) -> None:
    """One line when ``--scenario`` meets an option it cannot go with (say which to use)."""
    values = o.scenario or []
    first = f"--scenario {values[0]}"
    if o.compare or o.compare_drivers:
        other = "--compare" if o.compare else "--compare-drivers"
        raise PlanError(f"{first}: {other} compares two scenarios and --scenario two or more; use one: "
                        f"--scenario (e.g. --scenario now=a.yaml --scenario moved=b.yaml), or {other}")
    if o.calendar:
        raise PlanError(f"{first}: --calendar {o.calendar} is not used with --scenario, where each scenario "
                        "names its calendar; give it as the first --scenario (the reference)")
    if o.actuals:
        raise PlanError(f"--actuals {o.actuals}: a year-to-date re-plan is one plan; leave out --scenario "
                        "(or --actuals)")
    if o.reconcile or o.reconcile_method is not None:
        flag = "--reconcile" if o.reconcile else "--reconcile-method"
        raise PlanError(f"{first}: {flag} plans a panel's levels to add up, and --scenario plans one "
                        f"model under several calendars; use one of them")
    for name, (flag, _) in _PANEL_ONLY.items():
        if getattr(o, name):
            raise PlanError(f"{first}: {flag} is for panel models, and scenarios are planned for one model's "
                            f"folder; leave out {flag} (or --scenario)")


def refuse_combinations(o: PlanOptions) -> None:
    """Refuse, in one line, the first option of ``o`` that the plan it asks for would not use.

    ``--scenario`` with its exclusions (:func:`refuse_with_scenarios`); ``--reconcile-method``
    without ``--reconcile``; ``--workers`` with ``--reconcile``; and on a one-series model folder
    (``o.panel`` false) the panel options ``--allocate``, ``--series``, ``--workers``. What
    ``--reconcile`` refuses besides is checked where the levels are planned.

    Examples
    --------
    >>> refuse_combinations(PlanOptions(model_dir="models/total", panel=False, allocate="models/items"))
    Traceback (most recent call last):
    ...
    evcal.errors.PlanError: --allocate models/items: models/total is a one-series model; ...
    """
    if o.scenario:
        refuse_with_scenarios(o)
        return
    if o.reconcile_method is not None and not o.reconcile:
        raise PlanError(f"--reconcile-method {o.reconcile_method}: it chooses how --reconcile makes a "
                        "panel's levels add up; give --reconcile LEVEL too, or leave it out")
    if o.reconcile and o.workers is not None:
        raise PlanError(f"--workers {o.workers} with --reconcile: the levels are planned on one process; "
                        "leave out --workers (or --reconcile)")
    if o.panel or o.reconcile:  # a panel uses them; --reconcile checks its own (evcal.panel.levels)
        return
    for name, (flag, why) in _PANEL_ONLY.items():
        value = getattr(o, name)
        if value is None or value == [] or value == "":
            continue
        shown = ",".join(value) if isinstance(value, list) else value
        raise PlanError(f"{flag} {shown}: {o.model_dir} is a one-series model; {why}")
