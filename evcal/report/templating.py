"""The report's Jinja2 environment: templates shipped as package data, autoescape always on.

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
from typing import Any

import jinja2

from evcal.report import palette

#: the package folder that holds the templates (``evcal/report/templates``, see pyproject package-data)
TEMPLATE_FOLDER = "templates"


@functools.cache
def environment() -> jinja2.Environment:
    """The one environment: package templates, autoescape on, undefined names are errors."""
    env = jinja2.Environment(
        loader=jinja2.PackageLoader("evcal.report", TEMPLATE_FOLDER),
        autoescape=True,  # every template is HTML (or CSS holding no user text): escape all output
        undefined=jinja2.StrictUndefined,  # a misspelt field fails the tests instead of printing ""
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=False,
    )
    env.globals["pal"] = palette
    return env


def render(template: str, **data: Any) -> str:
    """Render one template of ``evcal/report/templates`` with plain data."""
    return environment().get_template(template).render(**data)
