"""Public holidays from the ``holidays`` library, one country (and subdivision).

The library does the hard part (which days, by law, in which year). This
module only answers what the calendar needs: which names exist, and on which
days a name falls in a given year, consecutive days of one name merged into
one occurrence. Names are the library's own ("Christmas Day").

Substitute days carry the library's "(observed)" suffix ("Christmas Day
(observed)"). They are kept out of the name list unless asked for by name
(in ``only`` or a ``holiday:`` rule), because most calendars want the day
itself and the substitute day is a different trading day.

Examples
--------
>>> src = HolidaySource.create("GB", "ENG")
>>> src.runs("Easter Monday", 2024)
[(datetime.date(2024, 4, 1), datetime.date(2024, 4, 1))]
"""

from __future__ import annotations

import datetime as dt
import difflib
import functools
import re
from collections.abc import Iterable
from dataclasses import dataclass, field

OBSERVED = "(observed)"


def _entity_names() -> dict[str, str]:
    """Country code -> readable name ("GB" -> "United Kingdom"), for suggestions."""
    import holidays

    out: dict[str, str] = {}
    registry = getattr(holidays, "registry", None)
    for _module, spec in getattr(registry, "COUNTRIES", {}).items():
        class_name, code = spec[0], spec[1]
        out[code] = re.sub(r"(?<!^)(?=[A-Z])", " ", class_name)
    return out


def suggest(word: str, choices: Iterable[str], n: int = 3) -> list[str]:
    """Near matches of ``word`` among ``choices`` (case-insensitive, difflib)."""
    choices = list(choices)
    if len(str(word)) > 100:  # no name is that long; difflib would take seconds on it
        return []
    lower = {c.lower(): c for c in choices}
    hits = difflib.get_close_matches(str(word).lower(), list(lower), n=n, cutoff=0.6)
    return [lower[h] for h in hits]


def _quote_list(items: Iterable[str]) -> str:
    return ", ".join(f"'{i}'" for i in items)


class HolidaySourceError(ValueError):
    """A country, subdivision or name the library does not know (message is user-facing)."""

    def __init__(self, key: str, message: str) -> None:
        super().__init__(message)
        self.key = key


@dataclass(frozen=True, eq=False)
class HolidaySource:
    """Holidays of one country/subdivision, looked up and cached year by year."""

    country: str
    subdivision: str | None = None
    language: str | None = None
    _cache: dict[int, dict[str, list[dt.date]]] = field(default_factory=dict, repr=False)

    @classmethod
    def create(
        cls, country: str, subdivision: str | None = None, language: str | None = None
    ) -> HolidaySource:
        """Check country and subdivision against the library, then build the source.

        Raises
        ------
        HolidaySourceError
            With ``key`` "country", "subdivision" or "language" and a one-line message
            that suggests near names.
        """
        import holidays  # imported when a calendar names a country: most runs never need it

        supported = holidays.list_supported_countries()
        code = str(country).strip()
        if code.upper() not in supported:
            try:  # the library also accepts some aliases (e.g. "UK")
                probe = holidays.country_holidays(code)
                code = probe.country
            except (NotImplementedError, KeyError, AttributeError):
                names = _entity_names()
                by_name = {v.lower(): k for k, v in names.items()}
                near = suggest(code, list(supported) + list(names.values()))
                near_codes = []
                for n in near:
                    c = n if n in supported else by_name.get(n.lower(), n)
                    label = f"{c} ({names[c]})" if c in names else c
                    if label not in near_codes:
                        near_codes.append(label)
                hint = f"did you mean {', '.join(near_codes)}?" if near_codes else (
                    "use an ISO 3166-1 alpha-2 code such as GB, US, DE"
                )
                raise HolidaySourceError(
                    "country",
                    f"'{country}' is not a country the holidays library knows; {hint}",
                ) from None
        else:
            code = code.upper()
        base = holidays.country_holidays(code)
        if subdivision is not None:
            subs = list(supported.get(code, []))
            aliases = dict(getattr(base, "subdivisions_aliases", {}) or {})
            sub = str(subdivision).strip()
            if sub not in subs and sub.upper() in subs:
                sub = sub.upper()
            if sub not in subs and sub not in aliases:
                near = suggest(sub, subs + list(aliases))
                if near:
                    hint = f"did you mean {_quote_list(near)}?"
                elif subs:
                    hint = f"use one of {', '.join(subs)}"
                else:
                    hint = f"{code} has no subdivisions in the holidays library; remove the key"
                raise HolidaySourceError(
                    "subdivision", f"'{subdivision}' is not a subdivision of {code}; {hint}"
                )
            subdivision = sub
        if language is not None:
            langs = list(getattr(base, "supported_languages", ()) or ())
            if language not in langs:
                hint = f"use one of {', '.join(langs)}" if langs else "remove the key"
                raise HolidaySourceError(
                    "language",
                    f"'{language}' is not a language the holidays library has for {code}; {hint}",
                )
        return cls(code, subdivision, language)

    def _year(self, year: int) -> dict[str, list[dt.date]]:
        got = self._cache.get(year)
        if got is None:
            import holidays

            table = holidays.country_holidays(
                self.country, subdiv=self.subdivision, years=year, language=self.language
            )
            got = {}
            for day in sorted(table):
                for name in table.get_list(day):
                    got.setdefault(name, []).append(day)
            self._cache[year] = got
        return got

    def names(self, years: Iterable[int], observed: bool = False) -> list[str]:
        """Holiday names that occur in any of ``years``, in order of first date.

        "(observed)" substitute days are left out unless ``observed`` is true.
        """
        firsts: dict[str, dt.date] = {}
        for y in years:
            for name, days in self._year(int(y)).items():
                if (observed or OBSERVED not in name) and name not in firsts:
                    firsts[name] = days[0]
        # Order by month-day of the first sighting, so January holidays come first.
        return sorted(firsts, key=lambda n: (firsts[n].month, firsts[n].day, n))

    def check_name(self, name: str, years: Iterable[int]) -> None:
        """Raise :class:`HolidaySourceError` (key "name") if ``name`` never occurs."""
        known = self.names(years, observed=True)
        if name in known:
            return
        near = suggest(name, known)
        hint = f"did you mean {_quote_list(near)}?" if near else (
            f"the names are: {_quote_list(self.names(years))}"
        )
        raise HolidaySourceError("name", f"'{name}' is not a holiday of {self.describe()}; {hint}")

    def runs(self, name: str, year: int) -> list[tuple[dt.date, dt.date]]:
        """Days of ``name`` in ``year``, consecutive days merged into (start, end) runs."""
        return list(_runs(tuple(self._year(year).get(name, ()))))

    def days(self, year: int) -> list[dt.date]:
        """Every holiday of ``year``, substitute "(observed)" days included (they are days off too)."""
        return sorted({d for days in self._year(year).values() for d in days})

    def weekend(self) -> frozenset[int]:
        """The country's weekend as the library has it (Python weekday numbers; Saturday and Sunday
        unless the country rests on other days)."""
        return _weekend(self.country, self.subdivision)

    def describe(self) -> str:
        return self.country + (f"/{self.subdivision}" if self.subdivision else "")


@functools.lru_cache(maxsize=64)
def _weekend(country: str, subdivision: str | None) -> frozenset[int]:
    import holidays

    table = holidays.country_holidays(country, subdiv=subdivision)
    return frozenset(getattr(table, "weekend", None) or {5, 6})


@functools.lru_cache(maxsize=8192)
def _runs(days: tuple[dt.date, ...]) -> tuple[tuple[dt.date, dt.date], ...]:
    out: list[tuple[dt.date, dt.date]] = []
    for d in days:
        if out and (d - out[-1][1]).days == 1:
            out[-1] = (out[-1][0], d)
        else:
            out.append((d, d))
    return tuple(out)
