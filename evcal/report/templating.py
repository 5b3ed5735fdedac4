"""The report's Jinja2 environment (templates shipped as package data, autoescape always on) and page frame.

Every value a template prints is escaped by MarkupSafe unless it is a
:class:`markupsafe.Markup`, and the report passes no ``Markup`` of its own:
sections get plain data (strings, numbers, lists, dicts), charts arrive as
``data:image/png`` URIs, so user text (event names and labels, notes, file
names, the calendar's name) can only ever reach the page as text.

Examples
--------
>>> environment().from_string("<p>{{ label }}</p>").render(label="<script>")
'<p>&lt;script&gt;</p>'
"""

from __future__ import annotations

import functools
from collections.abc import Mapping
from typing import Any

import jinja2

import evcal
from evcal.plan.workbook import CAUTION
from evcal.report import palette


@functools.cache
def environment() -> jinja2.Environment:
    """The one environment: ``evcal/report/templates``, autoescape on, undefined names are errors."""
    env = jinja2.Environment(
        loader=jinja2.PackageLoader("evcal.report"),
        autoescape=True,  # every template is HTML (or CSS holding no user text): escape all output
        undefined=jinja2.StrictUndefined,  # a misspelt field fails the tests instead of printing ""
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.globals["pal"] = palette
    return env


def render(template: str, **data: Any) -> str:
    """Render one template of ``evcal/report/templates`` with plain data."""
    return environment().get_template(template).render(**data)


def render_page(template: str, model: Mapping[str, Any], files: list[str], **data: Any) -> str:
    """A whole page in the frame every page shows: the version, the workbook's caution, the files read."""
    fitted_with = model.get("evcal_version")
    made = f"Made by evcal {evcal.__version__}" + (
        f" from a model fitted with evcal {fitted_with}" if fitted_with else ""
    )
    frame = {"version": evcal.__version__, "caution": CAUTION, "made": made, "files": "; ".join(files)}
    return render(template, **frame, **data)
