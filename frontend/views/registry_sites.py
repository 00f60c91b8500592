"""Registry pages of sites and buildings: add and edit a site (its climate read-only beside it), add and edit a
building, or move it to another site of the organisation."""

from __future__ import annotations

import zoneinfo

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.shortcuts import redirect, render
from django.urls import reverse

from engineering.units import to_display, unit_label
from inventory import services as inventory_services
from inventory.models import Building, Site
from inventory.selectors import sites_managed_by
from inventory.today import today_for

from .registry_form import Field, field_rows, form_page, read_fields, service_errors, shown_value, unique_code
from .registry_records import managed_building, managed_site
from .staff import managed_organisation

TIME_ZONES = tuple((z, z) for z in sorted(zoneinfo.available_timezones()) if "/" in z or z == "UTC")


def _site_fields() -> list[Field]:
    return [
        Field("name", "Site name", required=True),
        Field("address", "Address", kind="lines", max_length=1000, hint="Street, town and postcode, as for a visit."),
        Field(
            "latitude",
            "Latitude",
            kind="number",
            required=True,
            minimum=-90,
            maximum=90,
            unit="°",
            hint="North is positive; it sets the site's seasons (for example 51.5).",
        ),
        Field(
            "longitude",
            "Longitude",
            kind="number",
            required=True,
            minimum=-180,
            maximum=180,
            unit="°",
            hint="East is positive (for example -0.12).",
        ),
        Field(
            "time_zone",
            "Time zone",
            kind="choice",
            required=True,
            choices=TIME_ZONES,
            hint="The site's clock: due dates and visit times are in it.",
            allowed="a time zone from the list (such as Europe/Berlin or America/Chicago)",
        ),
        Field(
            "altitude_m",
            "Altitude above sea level",
            kind="number",
            minimum=-500,
            maximum=5000,
            quantity="length",
            hint="Height of the site; it corrects air density in the airflow checks.",
        ),
        Field(
            "preheat_threshold_c",
            "Freeze-season threshold",
            kind="number",
            minimum=-20,
            maximum=15,
            quantity="temperature",
            hint="When the usual daily low falls to this, the freeze season starts (about 5 °C / 41 °F is common "
            "practice): preheater and frost checks are planned from then.",
        ),
        Field(
            "cooling_threshold_c",
            "Cooling-season threshold",
            kind="number",
            minimum=10,
            maximum=45,
            quantity="temperature",
            hint="When the usual daily high reaches this, the cooling season starts: cooling-coil checks are "
            "planned from then.",
        ),
        Field(
            "access_notes",
            "Access notes for technicians",
            kind="lines",
            max_length=2000,
            hint="Keys, reception, parking, roof or plant-room access, escorts; shown to the technician on the phone.",
        ),
    ]


def _site_form(request, site: Site | None):
    system = request.user.unit_system
    fields = _site_fields()
    org = site.organisation if site else managed_organisation(request)
    values = {f.name: shown_value(f, getattr(site, f.name), system) for f in fields} if site else {}
    if site is None:
        values["time_zone"] = org.sites.values_list("time_zone", flat=True).first() or "UTC"
        for name in SITE_DEFAULTED:
            values[name] = shown_value(
                next(f for f in fields if f.name == name), Site._meta.get_field(name).get_default(), system
            )
    errors: dict = {}
    if request.method == "POST":
        clean, errors = read_fields(fields, request.POST, system=system, today=today_for(site or org))
        values = {f.name: request.POST.get(f.name, "") for f in fields}
        name = clean.get("name")
        if name and Site.objects.filter(organisation=org, name__iexact=name).exclude(pk=getattr(site, "pk", None)):
            errors.add(
                "name",
                f"Site name: {name!r} is already a site of {org.name}; allowed: a name no other "
                "site of the organisation has",
            )
        for key in SITE_DEFAULTED:  # left empty: the site keeps its value (a new one the usual default)
            if clean.get(key) is None:
                clean.pop(key, None)
        if not errors:
            try:
                if site is None:
                    taken = set(org.sites.values_list("code", flat=True))
                    site = inventory_services.site_create(
                        by=request.user, organisation=org, code=unique_code(name, taken), **clean
                    )
                    messages.success(request, f"Site {site.name} added. Add its buildings next.")
                else:
                    inventory_services.site_update(site=site, by=request.user, **clean)
                    messages.success(request, f"Site {site.name} saved.")
                return redirect("frontend:registry_site", pk=site.pk)
            except ValidationError as exc:
                errors = service_errors(exc)
    rows = field_rows(fields, values=values, errors=errors, system=system)
    if site is None or site.pk is None:
        return form_page(
            request,
            title="Add a site",
            rows=rows,
            errors=errors,
            back=reverse("frontend:registry"),
            submit="Add site",
            status=400 if errors else 200,
        )
    return render(
        request,
        "frontend/registry/site.html",
        {
            "site": site,
            "rows": rows,
            "refused": bool(errors),
            "loose": [t for k, ts in errors.items() if k not in {f.name for f in fields} for t in ts],
            "buildings": site.buildings.order_by("name").prefetch_related("ahus"),
            "climate": site_climate(site=site, system=system),
        },
        status=400 if errors else 200,
    )


SITE_DEFAULTED = ("altitude_m", "preheat_threshold_c", "cooling_threshold_c")
MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")


def site_climate(*, site: Site, system: str) -> dict:
    """The site's monthly climate normals and the season starts they give, in the person's units (read-only:
    they come from the site's location)."""
    unit = unit_label(quantity="temperature", system=system)

    def shown(value):
        return f"{to_display(value=float(value), quantity='temperature', system=system):.1f}"

    months = [
        {"month": m, "low": shown(lo), "high": shown(hi)}
        for m, lo, hi in zip(MONTHS, site.normals_min_c or [], site.normals_max_c or [], strict=False)
    ]
    return {
        "unit": unit,
        "months": months,
        "freeze_start": site.freeze_season_start,
        "cooling_start": site.cooling_season_start,
        "source": site.season_source,
    }


@login_required
def site_new(request):
    managed_organisation(request)
    return _site_form(request, None)


@login_required
def site_edit(request, pk):
    return _site_form(request, managed_site(request, pk))


BUILDING_FIELDS = [
    Field("name", "Building name", required=True),
    Field("floors", "Floors", kind="integer", minimum=0, maximum=300, hint="Leave empty if not known."),
]


def _check_building(request, *, fields: list[Field], site: Site, building: Building | None):
    """Check the posted building form: (clean values, refusals, the site it is to be at); nothing is saved. A
    name another building of that site has is refused."""
    clean, errors = read_fields(fields, request.POST, system=request.user.unit_system, today=today_for(site))
    target = site
    if building is not None and clean.get("site"):
        target = Site.objects.get(pk=clean["site"])
    clean.pop("site", None)
    name = clean.get("name")
    twin = target.buildings.filter(name__iexact=name).exclude(pk=getattr(building, "pk", None)) if name else None
    if twin:
        errors.add(
            "name",
            f"Building name: {name!r} is already a building of {target.name}; allowed: a name no "
            "other building of the site has",
        )
    return clean, errors, target


def _building_form(request, *, site: Site, building: Building | None):
    """Add a building to ``site``, or edit one; an edited building may move to another site of its organisation
    (its units, their records and open work go with it)."""
    system = request.user.unit_system
    fields = list(BUILDING_FIELDS)
    if building is not None:
        sites = sites_managed_by(user=request.user).filter(organisation_id=site.organisation_id).order_by("name")
        fields.append(
            Field(
                "site",
                "Site",
                kind="choice",
                required=True,
                choices=tuple((s.pk, s.name) for s in sites),
                hint="Choose another site to move the building there with its units and their records.",
                allowed="a site of the organisation",
            )
        )
    values = {f.name: shown_value(f, getattr(building, f.name), system) for f in BUILDING_FIELDS} if building else {}
    if building is not None:
        values["site"] = str(site.pk)
    errors: dict = {}
    if request.method == "POST":
        clean, errors, target = _check_building(request, fields=fields, site=site, building=building)
        values = {f.name: request.POST.get(f.name, "") for f in fields}
        name = clean.get("name")
        if not errors:
            try:
                if building is None:
                    taken = set(site.buildings.values_list("code", flat=True))
                    building = inventory_services.building_create(
                        by=request.user, site=site, code=unique_code(name, taken), **clean
                    )
                    messages.success(request, f"Building {building.name} added to {site.name}.")
                else:
                    if target != site:
                        taken = set(target.buildings.values_list("code", flat=True))
                        clean["site"] = target
                        if building.code in taken:
                            clean["code"] = unique_code(building.code, taken)
                    inventory_services.building_update(building=building, by=request.user, **clean)
                    moved = f" It is now at {target.name}." if target != site else ""
                    messages.success(request, f"Building {building.name} saved.{moved}")
                return redirect("frontend:registry_site", pk=target.pk)
            except ValidationError as exc:
                errors = service_errors(exc)
                if building is not None and building.pk is not None:
                    building.refresh_from_db()
    rows = field_rows(fields, values=values, errors=errors, system=system)
    title = f"Add a building to {site.name}" if building is None else f"Edit {building.name} ({site.name})"
    return form_page(
        request,
        title=title,
        rows=rows,
        errors=errors,
        back=reverse("frontend:registry_site", args=[site.pk]),
        submit="Add building" if building is None else "Save",
        status=400 if errors else 200,
    )


@login_required
def building_new(request, pk):
    return _building_form(request, site=managed_site(request, pk), building=None)


@login_required
def building_edit(request, pk):
    building = managed_building(request, pk)
    return _building_form(request, site=building.site, building=building)
