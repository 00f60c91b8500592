"""How late open work is, in whole days a reader can check by subtracting the dates named beside them.

"Since" is the first day past the grace (:func:`scheduling.models.overdue_day`, ``WorkOrder.overdue_from``); the
count is the whole days from that day to the site's today, so "due 4 Nov 2026, 28 days overdue (since 6 Nov
2026)" on 4 December: 4 Dec − 6 Nov = 28. On the first day past the grace the count is 0 and the words say
"overdue since today". The board, the findings, the work order pages, the site pages and the PDFs read this.
"""

from __future__ import annotations

import datetime as dt

from engineering.formatting import count_text


def days_overdue(*, since: dt.date, today: dt.date) -> int:
    """Whole days from ``since`` (the first day past the grace) to ``today``: 0 on that day, never negative."""
    return max((today - since).days, 0)


def overdue_words(*, since: dt.date, today: dt.date) -> str:
    """ "28 days overdue (since 6 Nov 2026)"; on ``since`` itself "overdue since today (6 Nov 2026)"."""
    days = days_overdue(since=since, today=today)
    if days == 0:
        return f"overdue since today ({since:%-d %b %Y})"
    return f"{count_text(days, 'day')} overdue (since {since:%-d %b %Y})"
