"""The event calendar: a YAML file of what happens when, as dated occurrences and day weights.

Examples
--------
>>> from evcal.calendar import load_calendar
>>> cal = load_calendar('''
... name: Demo
... events:
...   - {name: spring-weekend, when: {easter: -2}, length: 4, before: 3, shape: ramp}
... ''')
>>> cal.event("spring-weekend").window_offsets
[-3, -2, -1, 0, 1, 2, 3]
"""

from evcal.calendar.core import Calendar, PublicHolidays
from evcal.calendar.loader import load_calendar
from evcal.calendar.spec import (
    YEAR_RANGE,
    EffectSpec,
    EventSpec,
    ExclusionSpec,
    InterventionSpec,
    MovedSpec,
    YearsSpec,
)
from evcal.calendar.value_parsers import year_span_problems

__all__ = [
    "Calendar",
    "EffectSpec",
    "EventSpec",
    "ExclusionSpec",
    "InterventionSpec",
    "MovedSpec",
    "PublicHolidays",
    "YEAR_RANGE",
    "YearsSpec",
    "load_calendar",
    "year_span_problems",
]
