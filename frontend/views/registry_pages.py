"""Registry pages of the staff (supervisor and administrator): add and edit sites, buildings, units and their
component trees, move a unit to another building, retire a unit or a part with its history kept.

Every form shows its numbers in the person's units (engineering.units: airflow in L/s or cfm, temperatures in °C
or °F, pressures in Pa or in. w.c.) and every refusal beside its field, with the value as typed and what is
allowed. Writes go through inventory.services (audited); nothing is saved while any field is refused.
"""

from __future__ import annotations

import dataclasses
import math
import zoneinfo
from dataclasses import dataclass

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied, ValidationError
from django.http import Http404
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils.text import slugify

from accounts.inputs import FieldErrors, check_date, check_integer, check_text, parse_number
from engineering.errors import EngineeringInputError
from engineering.units import from_display, to_display, unit_label
from inventory import services as inventory_services
from inventory.inputs import AHU_NUMBERS
from inventory.models import AHU, Building, Component, ComponentKind, Site
from inventory.selectors import component_tree, components_visible_to, sites_managed_by, sites_visible_to
from inventory.specs import spec_fields
from inventory.today import today_for
from scheduling.services.retire import unit_retire as unit_retire_service

from ..specs_form import keep_typed_choice, plain_number, spec_initial, spec_rows, spec_summary, specs_from_post
from .supervisor import _ahu, _managed_ahus, _organisation
from .technician import unit_records_context

REFUSED = "Only a supervisor or administrator of the organisation may change the registry."


# ---------------------------------------------------------------------------
# Records named in the address: managed → the record; visible only → 403; otherwise → 404.
# ---------------------------------------------------------------------------
def _site(request, pk) -> Site:
    site = sites_managed_by(user=request.user).filter(pk=pk).first()
    if site is None:
        if sites_visible_to(user=request.user).filter(pk=pk).exists():
            raise PermissionDenied(REFUSED)
        raise Http404("No such site that you manage.")
    return site


def _managed_buildings(request):
    return Building.objects.filter(site__in=sites_managed_by(user=request.user)).select_related("site")


def _building(request, pk) -> Building:
    building = _managed_buildings(request).filter(pk=pk).first()
    if building is None:
        if Building.objects.filter(site__in=sites_visible_to(user=request.user), pk=pk).exists():
            raise PermissionDenied(REFUSED)
        raise Http404("No such building that you manage.")
    return building


def _component(request, pk) -> Component:
    component = Component.objects.filter(ahu__in=_managed_ahus(request), pk=pk).select_related("ahu__building").first()
    if component is None:
        if components_visible_to(user=request.user).filter(pk=pk).exists():
            raise PermissionDenied(REFUSED)
        raise Http404("No such component that you manage.")
    return component


# ---------------------------------------------------------------------------
# One form field: how it is shown, read and refused.
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Field:
    name: str
    label: str
    kind: str = "text"  # text | lines | number | integer | choice | bool | date
    required: bool = False
    max_length: int = 200
    minimum: float | None = None  # SI
    maximum: float | None = None
    unit: str = ""  # a unit with no display quantity (people, fraction…)
    quantity: str | None = None  # engineering.units quantity: shown and typed in the person's units
    choices: tuple = ()
    hint: str = ""
    allowed: str = ""  # said instead of the list of choices when the list is long or names records


def _fmt(value: float) -> str:
    return f"{round(value, 3):.10g}"


def _shown_value(field: Field, value, system: str):
    """A stored value as the form shows it (SI → the person's units)."""
    if value is None:
        return ""
    if field.kind == "number" and field.quantity and isinstance(value, int | float):
        return _fmt(to_display(value=value, quantity=field.quantity, system=system))
    if field.kind == "number" and isinstance(value, int | float):
        return _fmt(value)
    if field.kind == "date":
        return value.isoformat()
    return value


def _unit_text(field: Field, system: str) -> str:
    return unit_label(quantity=field.quantity, system=system) if field.quantity else field.unit


def _allowed(field: Field, system: str) -> str:
    if field.allowed:
        return field.allowed
    if field.kind == "number":
        # Written out in full (1000000, not 1e+06), in the person's units.
        lo, hi = (
            (to_display(value=v, quantity=field.quantity, system=system) for v in (field.minimum, field.maximum))
            if field.quantity
            else (field.minimum, field.maximum)
        )
        unit = _unit_text(field, system)
        return f"a number from {_fmt(lo)} to {_fmt(hi)}{f' {unit}' if unit else ''}"
    if field.kind == "integer":
        return f"a whole number from {field.minimum:g} to {field.maximum:g}{f' {field.unit}' if field.unit else ''}"
    if field.kind == "choice":
        return "one of " + ", ".join(str(label) for _, label in field.choices)
    if field.kind == "date":
        return "a date as YYYY-MM-DD"
    if field.kind == "bool":
        return ""
    return f"text of at most {field.max_length} characters"


def _number(field: Field, raw: str, *, system: str, errors: FieldErrors):
    """A number typed in the person's units → SI, refused as typed (never rounded back) when it is not one or
    is out of range."""
    allowed = _allowed(field, system)
    if not raw.strip():
        if field.required:
            errors.add(field.name, f"{field.label} is required; allowed: {allowed}")
        return None
    typed = parse_number(raw)
    if typed is None:
        errors.add(field.name, f"{field.label}: {raw.strip()[:40]!r} is not a finite number; allowed: {allowed}")
        return None
    try:
        value = from_display(value=typed, quantity=field.quantity, system=system) if field.quantity else typed
    except (EngineeringInputError, OverflowError):
        value = math.inf
    # A value typed at the edge of the range in another unit may convert a hair past it.
    slack = 1e-9 * max(abs(field.minimum), abs(field.maximum), 1)
    if not math.isfinite(value) or not field.minimum - slack <= value <= field.maximum + slack:
        unit = _unit_text(field, system)
        errors.add(
            field.name,
            f"{field.label}: {raw.strip()[:40]}{f' {unit}' if unit else ''} is out of range; allowed: {allowed}",
        )
        return None
    return min(max(value, field.minimum), field.maximum)


def _read(fields: list[Field], post, *, system: str, today) -> tuple[dict, FieldErrors]:
    """Clean values of every field present in the form, and every refusal keyed by field."""
    errors = FieldErrors()
    clean: dict = {}
    for f in fields:
        raw = post.get(f.name, "")
        if f.kind == "bool":
            clean[f.name] = raw in {"1", "on", "true"}
        elif f.kind == "number":
            clean[f.name] = _number(f, raw, system=system, errors=errors)
        elif f.kind == "integer":
            clean[f.name] = check_integer(
                raw,
                key=f.name,
                label=f.label,
                errors=errors,
                minimum=int(f.minimum),
                maximum=int(f.maximum),
                unit=f.unit,
                required=f.required,
            )
        elif f.kind == "choice":
            values = [str(v) for v, _ in f.choices]
            if raw not in values:
                if raw or f.required:
                    errors.add(
                        f.name, f"{f.label}: {raw[:40]!r} is not one of the choices; allowed: {_allowed(f, system)}"
                    )
                clean[f.name] = None
            else:
                clean[f.name] = raw
        elif f.kind == "date":
            clean[f.name] = check_date(raw, key=f.name, label=f.label, errors=errors, today=today) if raw else None
        else:
            value = check_text(
                raw,
                key=f.name,
                label=f.label,
                max_length=f.max_length,
                errors=errors,
                lines=f.kind == "lines",
                required=f.required,
            )
            clean[f.name] = value if value is not None else ""
    return clean, errors


def _rows(fields: list[Field], *, values: dict, errors: dict, system: str) -> list[dict]:
    """What the template draws for each field: label with its unit, the value (as typed after a refusal), the
    allowed values and the refusals."""
    rows = []
    for f in fields:
        unit = _unit_text(f, system)
        choices = [(str(v), label) for v, label in f.choices]
        rows.append(
            {
                "name": f.name,
                "id": f"f-{f.name}",
                "label": f"{f.label} ({unit})" if unit and f.kind in {"number", "integer"} else f.label,
                "kind": f.kind,
                "unit": unit,
                "required": f.required,
                "value": values.get(f.name, ""),
                "choices": keep_typed_choice(choices, values.get(f.name)),
                "hint": f.hint,
                "allowed": _allowed(f, system),
                "errors": errors.get(f.name, []),
                "maxlength": f.max_length,
            }
        )
    return rows


def _spec_as_rows(kind: str, *, values: dict, errors: dict, system: str) -> list[dict]:
    """The kind's spec fields (frontend.specs_form) in the same shape as the other rows."""
    out = []
    for r in spec_rows(fields=spec_fields(kind), values=values, errors=errors, system=system):
        s = r["spec"]
        number = s.kind in {"number", "integer"}
        out.append(
            {
                "name": r["name"],
                "id": r["id"],
                "label": f"{s.label} ({r['unit']})" if number and r["unit"] else s.label,
                "kind": {"choice": "choice", "bool": "bool", "date": "date"}.get(
                    s.kind, "number" if number else "text"
                ),
                "unit": r["unit"] if number else "",
                "required": s.required,
                "value": r["value"],
                "choices": r["choices"],
                "hint": "",
                "allowed": r["allowed"],
                "errors": r["errors"],
                "maxlength": r["maxlength"],
            }
        )
    return out


def _service_errors(exc: ValidationError) -> dict[str, list[str]]:
    errors = exc.message_dict if hasattr(exc, "error_dict") else {"__all__": exc.messages}
    return {key.removeprefix("specs."): list(texts) for key, texts in errors.items()}


def _page(
    request,
    *,
    title: str,
    rows: list[dict],
    errors: dict,
    back: str,
    submit: str,
    intro: str = "",
    extra: list[dict] | None = None,
    extra_title: str = "",
    status: int = 200,
    hidden: dict | None = None,
):
    shown = {r["name"].removeprefix("spec_") for r in [*rows, *(extra or [])]}
    loose = [t for key, texts in errors.items() if key not in shown for t in texts]
    return render(
        request,
        "frontend/registry/form.html",
        {
            "title": title,
            "intro": intro,
            "rows": rows,
            "extra": extra or [],
            "extra_title": extra_title,
            "refused": bool(errors),
            "loose": loose,
            "back": back,
            "submit": submit,
            "hidden": hidden or {},
        },
        status=status,
    )


def _unique_code(name: str, taken) -> str:
    base = (slugify(name) or "x")[:34]
    code, n = base, 2
    while code in taken:
        code, n = f"{base}-{n}", n + 1
    return code


# ---------------------------------------------------------------------------
# Sites
# ---------------------------------------------------------------------------
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
    org = site.organisation if site else _organisation(request)
    values = {f.name: _shown_value(f, getattr(site, f.name), system) for f in fields} if site else {}
    if site is None:
        values["time_zone"] = org.sites.values_list("time_zone", flat=True).first() or "UTC"
        for name in SITE_DEFAULTED:
            values[name] = _shown_value(
                next(f for f in fields if f.name == name), Site._meta.get_field(name).get_default(), system
            )
    errors: dict = {}
    if request.method == "POST":
        clean, errors = _read(fields, request.POST, system=system, today=today_for(site or org))
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
                        by=request.user, organisation=org, code=_unique_code(name, taken), **clean
                    )
                    messages.success(request, f"Site {site.name} added. Add its buildings next.")
                else:
                    inventory_services.site_update(site=site, by=request.user, **clean)
                    messages.success(request, f"Site {site.name} saved.")
                return redirect("frontend:registry_site", pk=site.pk)
            except ValidationError as exc:
                errors = _service_errors(exc)
    rows = _rows(fields, values=values, errors=errors, system=system)
    if site is None or site.pk is None:
        return _page(
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
    _organisation(request)
    return _site_form(request, None)


@login_required
def site_edit(request, pk):
    return _site_form(request, _site(request, pk))


# ---------------------------------------------------------------------------
# Buildings
# ---------------------------------------------------------------------------
BUILDING_FIELDS = [
    Field("name", "Building name", required=True),
    Field("floors", "Floors", kind="integer", minimum=0, maximum=300, hint="Leave empty if not known."),
]


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
    values = {f.name: _shown_value(f, getattr(building, f.name), system) for f in BUILDING_FIELDS} if building else {}
    if building is not None:
        values["site"] = str(site.pk)
    errors: dict = {}
    if request.method == "POST":
        clean, errors = _read(fields, request.POST, system=system, today=today_for(site))
        values = {f.name: request.POST.get(f.name, "") for f in fields}
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
        if not errors:
            try:
                if building is None:
                    taken = set(site.buildings.values_list("code", flat=True))
                    building = inventory_services.building_create(
                        by=request.user, site=site, code=_unique_code(name, taken), **clean
                    )
                    messages.success(request, f"Building {building.name} added to {site.name}.")
                else:
                    if target != site:
                        taken = set(target.buildings.values_list("code", flat=True))
                        clean["site"] = target
                        if building.code in taken:
                            clean["code"] = _unique_code(building.code, taken)
                    inventory_services.building_update(building=building, by=request.user, **clean)
                    moved = f" It is now at {target.name}." if target != site else ""
                    messages.success(request, f"Building {building.name} saved.{moved}")
                return redirect("frontend:registry_site", pk=target.pk)
            except ValidationError as exc:
                errors = _service_errors(exc)
                if building is not None and building.pk is not None:
                    building.refresh_from_db()
    rows = _rows(fields, values=values, errors=errors, system=system)
    title = f"Add a building to {site.name}" if building is None else f"Edit {building.name} ({site.name})"
    return _page(
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
    return _building_form(request, site=_site(request, pk), building=None)


@login_required
def building_edit(request, pk):
    building = _building(request, pk)
    return _building_form(request, site=building.site, building=building)


# ---------------------------------------------------------------------------
# Units
# ---------------------------------------------------------------------------
def _ahu_number(name: str, quantity: str | None = None, *, required: bool = False, hint: str = "") -> Field:
    r = AHU_NUMBERS[name]
    kind = "integer" if r.whole else "number"
    unit = "" if quantity else r.unit
    return Field(
        name,
        r.label,
        kind=kind,
        required=required,
        minimum=r.minimum,
        maximum=r.maximum,
        unit=unit,
        quantity=quantity,
        hint=hint,
    )


def _choices(name: str) -> tuple:
    return tuple(AHU._meta.get_field(name).choices)


def unit_fields(*, status: str | None) -> list[Field]:
    """The unit form's fields; ``status`` None for a new unit (it starts in service)."""
    fields = [
        Field("tag", "Tag", required=True, max_length=40, hint="As painted on the unit, e.g. AHU-03."),
        Field("location", "Location", hint="Where the unit stands, e.g. Roof plant room."),
        Field("area_served", "Area served", hint="e.g. Floors 1–3 offices."),
        _ahu_number("design_supply_airflow_m3s", "airflow", required=True),
        _ahu_number(
            "design_min_oa_fraction",
            required=True,
            hint="Outdoor air as a fraction of the supply airflow at minimum, 0–1 (0.25 is a quarter).",
        ),
        Field("full_outdoor_air", "100 % outdoor air (no recirculation)", kind="bool"),
        Field("ventilation_zones", "Zones served", kind="choice", required=True, choices=_choices("ventilation_zones")),
        Field(
            "air_distribution",
            "Air distribution in the space",
            kind="choice",
            required=True,
            choices=_choices("air_distribution"),
            allowed="one of the listed ways supply and return air are placed",
        ),
        _ahu_number("occupant_diversity", hint="Several zones only; leave empty for none."),
        _ahu_number("system_ventilation_efficiency", hint="Several zones only; leave empty for the simplified way."),
        Field("heat_recovery", "Heat recovery", kind="choice", required=True, choices=_choices("heat_recovery")),
        _ahu_number("supply_air_setpoint_c", "temperature"),
        _ahu_number("duct_static_setpoint_pa", "pressure"),
        _ahu_number("floor_area_m2", "area"),
        _ahu_number("design_occupants"),
        Field("service_start", "Service start", kind="date", hint="The day the unit started (or will start) running."),
    ]
    if status is not None:
        statuses = [(v, t) for v, t in AHU.Status.choices if v != AHU.Status.RETIRED or status == AHU.Status.RETIRED]
        fields.append(
            Field(
                "status",
                "Status",
                kind="choice",
                required=True,
                choices=tuple(statuses),
                hint="To retire a unit use Retire on its page: its open work is cancelled.",
            )
        )
    fields.append(Field("notes", "Notes", kind="lines", max_length=20_000))
    return fields


def _tag_taken(building: Building, tag: str, *, ahu: AHU | None) -> str | None:
    twin = building.ahus.filter(tag__iexact=tag).exclude(pk=getattr(ahu, "pk", None)).first()
    if twin is None:
        return None
    return (
        f"Tag: {tag!r} is already used by {twin.tag} in {building.name} ({building.site.name}); allowed: a tag "
        "no other unit of the building has"
    )


def _unit_form(request, *, ahu: AHU | None):
    system = request.user.unit_system
    fields = unit_fields(status=ahu.status if ahu else None)
    buildings = list(_managed_buildings(request).order_by("site__name", "name"))
    if ahu is None:
        building_field = Field(
            "building",
            "Site and building",
            kind="choice",
            required=True,
            choices=tuple((b.pk, f"{b.site.name} · {b.name}") for b in buildings),
            allowed="a building of a site you manage (add the site and building first)",
        )
        fields = [building_field, *fields]
        values = {f.name: _shown_value(f, AHU._meta.get_field(f.name).get_default(), system) for f in fields[1:]}
        values["building"] = request.GET.get("building", "")
        values["design_min_oa_fraction"] = ""
    else:
        values = {f.name: _shown_value(f, getattr(ahu, f.name), system) for f in fields}
    errors: dict = {}
    if request.method == "POST":
        # A field the form did not send keeps its value (an older form, or a page that shows fewer fields).
        post = request.POST.copy()
        for f in fields:
            if f.name not in post and f.kind != "bool" and ahu is not None:
                post[f.name] = str(values.get(f.name, ""))
        # Dates are judged on the day of the unit's site (of the building chosen for a new one).
        chosen = ahu.building if ahu else next((b for b in buildings if str(b.pk) == post.get("building")), None)
        clean, errors = _read(fields, post, system=system, today=today_for(chosen.site if chosen else request.user))
        values = {f.name: post.get(f.name, "") for f in fields}
        values["full_outdoor_air"] = clean.get("full_outdoor_air")
        building = ahu.building if ahu else next((b for b in buildings if str(b.pk) == clean.get("building")), None)
        if building is not None and clean.get("tag"):
            taken = _tag_taken(building, clean["tag"], ahu=ahu)
            if taken:
                errors.add("tag", taken)
        if not errors:
            clean.pop("building", None)
            try:
                if ahu is None:
                    ahu = inventory_services.ahu_create(by=request.user, building=building, **clean)
                    messages.success(request, f"{ahu.display_name} added. Add its components next.")
                else:
                    inventory_services.ahu_update(ahu=ahu, by=request.user, **clean)
                    messages.success(request, f"{ahu.display_name} saved.")
                return redirect("frontend:registry_unit", pk=ahu.pk)
            except ValidationError as exc:
                errors = _service_errors(exc)
                if ahu is not None and ahu.pk is None:
                    ahu = None
            if ahu is not None:
                ahu.refresh_from_db()
    values["full_outdoor_air"] = bool(values.get("full_outdoor_air"))
    rows = _rows(fields, values=values, errors=errors, system=system)
    if ahu is None:
        return _page(
            request,
            title="Add a unit",
            rows=rows,
            errors=errors,
            back=reverse("frontend:registry"),
            submit="Add unit",
            status=400 if errors else 200,
        )
    return _page(
        request,
        title=f"Edit {ahu.display_name}",
        rows=rows,
        errors=errors,
        submit="Save",
        back=reverse("frontend:registry_unit", args=[ahu.pk]),
        status=200,
    )


@login_required
def unit_new(request):
    _organisation(request)
    return _unit_form(request, ahu=None)


@login_required
def unit_edit(request, pk):
    return _unit_form(request, ahu=_ahu(request, pk))


@login_required
def unit_move(request, pk):
    ahu = _ahu(request, pk)
    org_id = ahu.building.site.organisation_id
    choices = tuple(
        (b.pk, f"{b.site.name} · {b.name}")
        for b in _managed_buildings(request).filter(site__organisation_id=org_id).order_by("site__name", "name")
        if b.pk != ahu.building_id
    )
    field = Field(
        "building",
        "Move to building",
        kind="choice",
        required=True,
        choices=choices,
        hint="Its components, records and open work go with it.",
        allowed="another building of the organisation",
    )
    values, errors = {}, {}
    if request.method == "POST":
        clean, errors = _read(
            [field], request.POST, system=request.user.unit_system, today=today_for(ahu.building.site)
        )
        values = {"building": request.POST.get("building", "")}
        if not errors:
            target = Building.objects.select_related("site").get(pk=clean["building"])
            taken = _tag_taken(target, ahu.tag, ahu=ahu)
            if taken:
                errors = {
                    "building": [
                        f"{target.name} already has a unit tagged {ahu.tag}; change one of the tags "
                        "first (Edit), then move it"
                    ]
                }
            else:
                try:
                    inventory_services.ahu_move(ahu=ahu, building=target, by=request.user)
                except ValidationError as exc:
                    errors = _service_errors(exc)
                else:
                    messages.success(request, f"{ahu.tag} moved to {target.site.name} · {target.name}.")
                    return redirect("frontend:registry_unit", pk=ahu.pk)
    rows = _rows([field], values=values, errors=errors, system=request.user.unit_system)
    return _page(
        request,
        title=f"Move {ahu.display_name}",
        rows=rows,
        errors=errors,
        submit="Move unit",
        intro=f"Now in {ahu.building.site.name} · {ahu.building.name}."
        + ("" if choices else " There is no other building of the organisation yet: add one on a site's page first."),
        back=reverse("frontend:registry_unit", args=[ahu.pk]),
        status=400 if errors else 200,
    )


REASON = Field("reason", "Reason", kind="lines", max_length=300, hint="e.g. Replaced by AHU-05; removed in the refit.")


@login_required
def unit_retire(request, pk):
    ahu = _ahu(request, pk)
    errors: dict = {}
    values: dict = {}
    open_work = list(ahu.work_orders.filter(state__in=["planned", "assigned", "in_progress"]).order_by("due_date"))
    if ahu.status == AHU.Status.RETIRED:
        errors = {"__all__": [f"{ahu.display_name} is already retired."]}
    elif request.method == "POST":
        clean, errors = _read(
            [REASON], request.POST, system=request.user.unit_system, today=today_for(ahu.building.site)
        )
        values = {"reason": request.POST.get("reason", "")}
        if not errors:
            try:
                cancelled = unit_retire_service(ahu=ahu, by=request.user, reason=clean["reason"])
            except ValidationError as exc:
                errors = _service_errors(exc)
            else:
                more = f" {cancelled} open visit(s) cancelled." if cancelled else ""
                messages.success(request, f"{ahu.display_name} is retired; its records are kept.{more}")
                return redirect("frontend:registry_unit", pk=ahu.pk)
    return render(
        request,
        "frontend/registry/retire.html",
        {
            "title": f"Retire {ahu.display_name}",
            "what": "unit",
            "ahu": ahu,
            "open_work": open_work,
            "rows": _rows([REASON], values=values, errors=errors, system=request.user.unit_system),
            "loose": errors.get("__all__", []) + errors.get("status", []) + errors.get("work", []),
            "back": reverse("frontend:registry_unit", args=[ahu.pk]),
            "done": ahu.status == AHU.Status.RETIRED,
        },
        status=400 if errors and request.method == "POST" else 200,
    )


# ---------------------------------------------------------------------------
# Components
# ---------------------------------------------------------------------------
KIND_CHOICES = tuple(ComponentKind.choices)
COMPONENT_NAME_MAX = Component._meta.get_field("name").max_length


def _parent_choices(ahu: AHU) -> tuple:
    def walk(nodes, depth):
        for node in nodes:
            c = node["component"]
            if c.retired_on is None:
                yield (c.pk, f"{'— ' * depth}{c.name} ({c.get_kind_display()})")
                yield from walk(node["children"], depth + 1)

    return (("", "None: directly in the unit"), *walk(component_tree(ahu=ahu), 0))


@login_required
def component_new(request, pk):
    ahu = _ahu(request, pk)
    system = request.user.unit_system
    back = reverse("frontend:registry_unit", args=[ahu.pk])
    if ahu.status == AHU.Status.RETIRED:
        messages.error(request, f"{ahu.display_name} is retired; parts cannot be added to it.")
        return redirect(back)
    kind = request.POST.get("kind") or request.GET.get("kind", "")
    kind_field = Field("kind", "Kind of part", kind="choice", required=True, choices=KIND_CHOICES)
    if kind not in SPECS_KINDS:
        errors = {}
        if kind:
            errors = {
                "kind": [
                    f"Kind of part: {kind[:40]!r} is not one of the choices; allowed: {_allowed(kind_field, system)}"
                ]
            }
        rows = _rows([kind_field], values={"kind": kind}, errors=errors, system=system)
        return render(
            request,
            "frontend/registry/choose_kind.html",
            {"ahu": ahu, "rows": rows, "back": back, "refused": bool(errors)},
            status=400 if errors else 200,
        )
    fields = [
        Field(
            "name",
            "Name",
            required=True,
            max_length=COMPONENT_NAME_MAX,
            hint="As the technician will read it, e.g. Final filters.",
        ),
        Field(
            "parent",
            "Part of",
            kind="choice",
            choices=_parent_choices(ahu),
            hint="A part inside another (a fan inside a fan section); most parts sit directly in the unit.",
            allowed="none, or a part of this unit that is not retired",
        ),
        Field("installed_on", "Installed on", kind="date"),
        _position_field(ahu),
    ]
    last = ahu.components.order_by("-position").values_list("position", flat=True).first()
    next_place = min((last or 0) + 1, POSITION_MAX)
    values: dict = {"name": dict(KIND_CHOICES)[kind], "parent": "", "position": str(next_place)}
    spec_values: dict = {}
    errors: dict = {}
    if request.method == "POST":
        clean, errors = _read(fields, request.POST, system=system, today=today_for(ahu.building.site))
        values = {f.name: request.POST.get(f.name, "") for f in fields}
        specs, spec_errors = specs_from_post(kind=kind, post=request.POST, system=system)
        spec_values = {s.name: request.POST.get(f"spec_{s.name}", "") for s in spec_fields(kind)}
        spec_values.update(
            {s.name: True for s in spec_fields(kind) if s.kind == "bool" and s.name in specs and specs[s.name]}
        )
        errors.update(spec_errors)
        if not errors:
            parent = ahu.components.filter(pk=clean["parent"]).first() if clean.get("parent") else None
            try:
                component = inventory_services.component_create(
                    by=request.user,
                    ahu=ahu,
                    kind=kind,
                    name=clean["name"],
                    parent=parent,
                    specs=specs,
                    installed_on=clean["installed_on"],
                    position=next_place if clean.get("position") is None else clean["position"],
                )
            except ValidationError as exc:
                errors = _service_errors(exc)
            else:
                messages.success(request, f"{component.name} added to {ahu.display_name}.")
                return redirect(back)
    rows = _rows(fields, values=values, errors=errors, system=system)
    spec = _spec_as_rows(kind, values=spec_values, errors=errors, system=system)
    return _page(
        request,
        title=f"Add {with_article(dict(KIND_CHOICES)[kind].lower())} to {ahu.display_name}",
        rows=rows,
        errors=errors,
        back=back,
        submit="Add part",
        extra=spec,
        extra_title="Specifications",
        hidden={"kind": kind},
        status=400 if errors else 200,
    )


SPECS_KINDS = set(ComponentKind.values)
POSITION_MAX = 32767


def with_article(words: str) -> str:
    """'an electric preheater', 'a filter bank' (by the first letter's sound; good enough for our kind names)."""
    return f"{'an' if words[:1].lower() in 'aeiou' else 'a'} {words}"


def _position_field(ahu: AHU, *, but: Component | None = None) -> Field:
    now = ", ".join(
        f"{c.position} {c.name}"
        for c in ahu.components.filter(retired_on__isnull=True, parent__isnull=True).order_by("position", "id")
        if c != but
    )
    return Field(
        "position",
        "Place in the airstream",
        kind="integer",
        minimum=0,
        maximum=POSITION_MAX,
        hint="Parts are listed from the outdoor-air intake to the supply outlet: a lower number comes first "
        "(a pre-filter before the preheater, for example)." + (f" Now: {now}." if now else ""),
    )


def _descendants(component: Component) -> set[int]:
    below: dict[int | None, list[int]] = {}
    for pk, parent in component.ahu.components.values_list("pk", "parent_id"):
        below.setdefault(parent, []).append(pk)
    found, todo = set(), [component.pk]
    while todo:
        for child in below.get(todo.pop(), []):
            if child not in found:
                found.add(child)
                todo.append(child)
    return found


@login_required
def component_edit(request, pk):
    """Edit a part: its name, where it sits (inside another part, its place along the airstream), when it was
    installed, and its specifications. A part cannot be inside itself or inside a part it contains."""
    component = _component(request, pk)
    ahu = component.ahu
    system = request.user.unit_system
    parent_field = Field(
        "parent",
        "Part of",
        kind="choice",
        choices=_parent_choices(ahu),
        hint="A part inside another (a fan inside a fan section); most parts sit directly in the unit.",
        allowed="none, or another part of this unit that is not retired and is not inside this one",
    )
    place = [parent_field, _position_field(ahu, but=component), Field("installed_on", "Installed on", kind="date")]
    values = {
        "parent": str(component.parent_id or ""),
        "position": str(component.position),
        "installed_on": component.installed_on.isoformat() if component.installed_on else "",
    }
    spec_values = spec_initial(component=component, system=system)
    name = component.name
    errors: dict = {}
    status = 200
    if request.method == "POST":
        specs, errors = specs_from_post(kind=component.kind, post=request.POST, system=system)
        spec_values = {k: request.POST.get(f"spec_{k}", "") for k in spec_values}
        name = request.POST.get("name", "")
        checked = FieldErrors()
        clean_name = check_text(
            name, key="name", label="Name", max_length=COMPONENT_NAME_MAX, errors=checked, required=True
        )
        # A form without the place fields (an older page) keeps the part where it is.
        post = request.POST.copy()
        for key, value in values.items():
            post.setdefault(key, value)
        raw_parent = post.get("parent", "")
        inside = _descendants(component)
        if raw_parent == str(component.pk):
            checked.add("parent", f"Part of: {component.name} cannot be inside itself; allowed: {parent_field.allowed}")
        elif raw_parent.isdigit() and int(raw_parent) in inside:
            child = ahu.components.get(pk=int(raw_parent))
            checked.add(
                "parent",
                f"Part of: {child.name} is inside {component.name}, so {component.name} cannot go inside it; "
                f"allowed: {parent_field.allowed}",
            )
        clean, more = _read(place, post, system=system, today=today_for(ahu.building.site))
        for key, texts in more.items():
            if key not in checked:
                for text in texts:
                    checked.add(key, text)
        values = {f.name: post.get(f.name, "") for f in place}
        errors.update(checked)
        if not errors:
            parent = ahu.components.filter(pk=clean["parent"]).first() if clean.get("parent") else None
            changes = {"name": clean_name, "specs": specs, "parent": parent, "installed_on": clean["installed_on"]}
            if clean.get("position") is not None:
                changes["position"] = clean["position"]
            try:
                inventory_services.component_update(component=component, by=request.user, **changes)
            except ValidationError as exc:
                errors = exc.message_dict if hasattr(exc, "error_dict") else {"__all__": exc.messages}
            else:
                messages.success(request, f"{component.name} saved.")
                return redirect("frontend:registry_unit", pk=ahu.pk)
        errors = {key.removeprefix("specs."): texts for key, texts in errors.items()}
        status = 400
        component.refresh_from_db()  # the heading names the part as stored, not as typed
    rows = spec_rows(fields=spec_fields(component.kind), values=spec_values, errors=errors, system=system)
    shown = {r["spec"].name for r in rows} | {f.name for f in place} | {"name"}
    # The select offers neither the part itself nor the parts inside it (a tampered form is refused above).
    barred = {component.pk, *_descendants(component)}
    offered = tuple(c for c in parent_field.choices if c[0] not in barred)
    shown_place = [dataclasses.replace(parent_field, choices=offered), *place[1:]]
    return render(
        request,
        "frontend/supervisor/component_edit.html",
        {
            "component": component,
            "rows": rows,
            "place": _rows(shown_place, values=values, errors=errors, system=system),
            "name": name,
            "name_max": COMPONENT_NAME_MAX,
            "name_errors": errors.get("name", []),
            "errors": [text for key, texts in errors.items() if key not in shown for text in texts],
        },
        status=status,
    )


def unit_design(*, ahu: AHU, system: str) -> list[tuple[str, str]]:
    """The unit's design values as (label, value in the person's units), leaving out what is not given."""
    out = []
    for f in unit_fields(status=ahu.status):
        if f.name in {"tag", "location", "notes", "status"}:
            continue
        value = getattr(ahu, f.name)
        if value is None or value == "":
            continue
        if f.kind == "bool":
            out.append((f.label, "yes" if value else "no"))
        elif f.kind == "choice":
            out.append((f.label, str(getattr(ahu, f"get_{f.name}_display")())))
        elif f.kind in {"number", "integer"}:
            unit = _unit_text(f, system)
            shown = to_display(value=value, quantity=f.quantity, system=system) if f.quantity else value
            out.append((f.label, f"{plain_number(shown)}{f' {unit}' if unit else ''}"))
        elif f.kind == "date":
            out.append((f.label, f"{value:%d %b %Y}"))
        else:
            out.append((f.label, str(value)))
    return out


def _with_specs(nodes: list[dict], system: str) -> list[dict]:
    return [
        {
            **n,
            "specs": spec_summary(component=n["component"], system=system),
            "children": _with_specs(n["children"], system),
        }
        for n in nodes
    ]


@login_required
def unit_detail(request, pk):
    ahu = _ahu(request, pk)
    system = request.user.unit_system
    return render(
        request,
        "frontend/supervisor/unit.html",
        {
            "ahu": ahu,
            "design": unit_design(ahu=ahu, system=system),
            "tree": _with_specs(component_tree(ahu=ahu), system),
            **unit_records_context(ahu=ahu, system=system),
        },
    )


@login_required
def component_retire(request, pk):
    component = _component(request, pk)
    ahu = component.ahu
    back = reverse("frontend:registry_unit", args=[ahu.pk])
    errors: dict = {}
    values: dict = {}
    if component.retired_on is not None:
        errors = {"__all__": [f"{component.name} was retired on {component.retired_on:%d %b %Y}."]}
    elif request.method == "POST":
        today = today_for(ahu.building.site)
        clean, errors = _read([REASON], request.POST, system=request.user.unit_system, today=today)
        values = {"reason": request.POST.get("reason", "")}
        if not errors:
            try:
                retired = inventory_services.component_retire(
                    component=component, on=today, by=request.user, reason=clean["reason"]
                )
            except ValidationError as exc:
                errors = _service_errors(exc)
            else:
                inside = f" with {len(retired) - 1} part(s) inside it" if len(retired) > 1 else ""
                messages.success(request, f"{component.name} retired{inside}; its records are kept.")
                return redirect(back)
    children = list(component.children.filter(retired_on__isnull=True))
    return render(
        request,
        "frontend/registry/retire.html",
        {
            "title": f"Retire {component.name} of {ahu.display_name}",
            "what": "component",
            "ahu": ahu,
            "component": component,
            "children": children,
            "rows": _rows([REASON], values=values, errors=errors, system=request.user.unit_system),
            "loose": [t for k, ts in errors.items() if k != "reason" for t in ts],
            "back": back,
            "done": component.retired_on is not None,
        },
        status=400 if errors and request.method == "POST" else 200,
    )


def unit_form_initial(*, ahu: AHU, system: str) -> dict:
    """The unit form as it opens for ``ahu``: each field's value in the person's units (tests post it back)."""
    return {f.name: _shown_value(f, getattr(ahu, f.name), system) for f in unit_fields(status=ahu.status)}
