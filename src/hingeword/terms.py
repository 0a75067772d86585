"""Term start dates from term names, so that terms scanned without ``--term-start`` still
come in the right order.

Terms are ordered by their start date. A name that carries a date gives one
(:func:`infer_term_start`):

* an ISO date or month: ``2026-01-12`` → 2026-01-12, ``2026-01`` → 2026-01-01;
* a year and a month name: ``2026-march``, ``March 2026`` → 2026-03-01;
* a year and a season (northern-hemisphere school terms, common practice):
  ``winter`` → 1 January, ``spring`` → 1 March, ``summer`` → 1 June,
  ``autumn``/``fall`` → 1 September of that year (``2025-autumn`` → 2025-09-01).

Anything else (``term 2``, ``B1 group``) gives ``None``: the scan then uses today's date
and says so.
"""

from __future__ import annotations

import datetime as _dt
import re

#: Month of each season's term start (documented above and in the README).
SEASONS = {"winter": 1, "spring": 3, "summer": 6, "autumn": 9, "fall": 9}
_MONTHS = {name: i for i, name in enumerate(
    "january february march april may june july august september october november december".split(), start=1)}
_MONTHS.update({name[:3]: i for name, i in list(_MONTHS.items())})
_ISO = re.compile(r"(?<!\d)((?:19|20)\d\d)-(0[1-9]|1[0-2])(?:-(0[1-9]|[12]\d|3[01]))?(?!\d)")
_YEAR = re.compile(r"(?<!\d)((?:19|20)\d\d)(?!\d)")


def infer_term_start(term: str) -> str | None:
    """The start date (``YYYY-MM-DD``) a term name carries, or ``None`` (see the module docstring)."""
    text = str(term).lower()
    m = _ISO.search(text)
    if m:
        year, month, day = int(m.group(1)), int(m.group(2)), int(m.group(3) or 1)
        try:
            return _dt.date(year, month, day).isoformat()
        except ValueError:
            return None
    years = _YEAR.findall(text)
    if len(set(years)) != 1:
        return None
    words = re.findall(r"[a-z]+", text)
    months = [SEASONS[w] for w in words if w in SEASONS] + [_MONTHS[w] for w in words if w in _MONTHS]
    if len(set(months)) != 1:
        return None
    return _dt.date(int(years[0]), months[0], 1).isoformat()
