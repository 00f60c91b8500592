"""Template helpers for the PDFs: moments on the site's clock, as the pages show them."""

from django import template

from inventory.display import local_time_text

register = template.Library()


@register.filter
def site_time(value, site) -> str:
    """A moment on the site's clock with the zone named, "2 Dec 2026 06:30 CET" ("" without a moment)."""
    if not value:
        return ""
    return local_time_text(value, zone=getattr(site, "time_zone", site) or "UTC")
