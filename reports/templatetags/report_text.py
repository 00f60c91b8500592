"""Template helpers for the PDFs: moments on the site's clock, as the pages show them."""

from django import template

from inventory.display import site_time_text

register = template.Library()

# A moment on the site's clock with the zone named, "2 Dec 2026 06:30 CET" ("" without a moment).
register.filter("site_time", site_time_text)
