"""Template helpers for the PDFs: days and moments as the pages write them, moments on the site's clock."""

import datetime as dt

from django import template

from accounts.clock import local_date_of
from inspections.display import place_words
from inventory.display import site_date_text, site_time_text

register = template.Library()

# A moment on the site's clock with the zone named, "2 Dec 2026 06:30 CET" ("" without a moment).
register.filter("site_time", site_time_text)
# The day of a moment on the site's clock, "2 Dec 2026" ("" without a moment).
register.filter("site_day", site_date_text)
# Where a task or reading belongs: its part's name, or "whole unit" (one function for every record).
register.filter("place", place_words)


@register.filter
def day(value: dt.date | None) -> str:
    """A calendar day (a due date, a season's start) as the app writes it, "2 Dec 2026"; "" without one."""
    if not value:
        return ""
    if isinstance(value, dt.datetime):
        raise TypeError("a moment has a zone: use site_day with the site")
    return local_date_of(value)
