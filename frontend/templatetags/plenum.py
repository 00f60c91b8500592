"""Template helpers: the navigation for the person's role, readings in their units."""

from django import template
from django.urls import NoReverseMatch, reverse

from accounts.clock import day_text, time_zone, zone_abbreviation
from accounts.models import Role
from accounts.selectors import primary_role
from inventory.display import site_time_text

from ..pwa import person_key

register = template.Library()

NAV_BY_ROLE = {
    Role.TECHNICIAN: [("frontend:today", "Today"), ("frontend:calculator", "Calculator")],
    Role.SUPERVISOR: [
        ("frontend:board", "Board"),
        ("frontend:work_new", "New work"),
        ("frontend:registry", "Registry"),
        ("frontend:findings", "Findings"),
        ("frontend:corrective", "Corrective work"),
        ("frontend:faults", "Faults"),
        ("frontend:flagged", "Flagged forms"),
        ("frontend:records", "Reports"),
        ("frontend:calculator", "Calculator"),
    ],
    Role.PROPERTY_MANAGER: [
        ("frontend:dashboard", "Dashboard"),
        ("frontend:manager_findings", "Findings"),
        ("frontend:faults", "Faults"),
        ("frontend:records", "Reports"),
    ],
}
NAV_BY_ROLE[Role.ADMIN] = [*NAV_BY_ROLE[Role.SUPERVISOR], ("frontend:people", "People")]
# Everyone's own settings (units, calendar address, password), last in every menu.
for _links in NAV_BY_ROLE.values():
    _links.append(("frontend:profile", "Profile"))


def _role(request) -> str | None:
    role = getattr(request, "_plenum_role", None)
    if role is None:
        role = primary_role(user=request.user)
        request._plenum_role = role
    return role


@register.simple_tag(takes_context=True)
def plenum_role(context) -> str | None:
    """The person's strongest role (read once per request)."""
    request = context["request"]
    return _role(request) if request.user.is_authenticated else None


@register.simple_tag(takes_context=True)
def plenum_person(context) -> str:
    """The key this phone keeps the signed-in person's pages and forms under ("" when nobody is signed in)."""
    request = context["request"]
    return person_key(user=request.user) if request.user.is_authenticated else ""


@register.inclusion_tag("frontend/_nav.html", takes_context=True)
def plenum_nav(context):
    request = context["request"]
    links = []
    if request.user.is_authenticated:
        role = _role(request)
        for name, text in NAV_BY_ROLE.get(role, []):
            try:
                url = reverse(name)
            except NoReverseMatch:
                continue
            links.append({"url": url, "text": text, "current": request.path.startswith(url)})
    return {"links": links, "request": request}


# A moment as the site's clock shows it, with the zone named: "2 Dec 2026 06:30 CET" ("" without a moment).
# ``site`` is a Site (or a time zone name); every time a person reads on the pages goes through here.
register.filter("site_time", site_time_text)


@register.filter
def day(value, today):
    """A day as the board writes it: "1 Dec" this year, "1 Dec 2036" in another (accounts.clock.day_text)."""
    return day_text(value, today=today) if value else ""


@register.filter
def site_clock(when, site) -> str:
    """Only the time of ``when`` on the clock of ``site`` with the zone named, "14:00 CET" (a due time beside its
    day); "" without a moment."""
    if not when:
        return ""
    local = when.astimezone(time_zone(getattr(site, "time_zone", site)))
    return f"{local:%H:%M} {zone_abbreviation(local)}"


@register.simple_tag
def repair_cautions(component: object = None, condition_code: str = "") -> list[str]:
    """``inspections.selectors.repair_cautions`` for a part (or the whole unit) and a condition, for
    ``frontend/_cautions.html``: ``{% repair_cautions wo.component wo.condition_code as cautions %}``."""
    from inspections.selectors import repair_cautions as cautions_of

    return cautions_of(component_kind=getattr(component, "kind", None), condition_code=condition_code or "")
