"""Registry pages of units: add, edit, move to another building, retire with the history kept, and the unit's
page with its design values and component tree."""

from __future__ import annotations

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.shortcuts import redirect, render
from django.urls import reverse

from engineering.formatting import count_text
from engineering.units import to_display
from inventory import services as inventory_services
from inventory.inputs import AHU_NUMBERS
from inventory.models import AHU, Building
from inventory.selectors import component_tree
from inventory.today import today_for
from scheduling.services.retire import unit_retire as unit_retire_service

from ..specs_form import plain_number, spec_summary
from .registry_form import (
    REASON,
    Field,
    field_rows,
    form_page,
    read_fields,
    say_saved_warnings,
    service_errors,
    shown_value,
    unit_text,
)
from .registry_records import managed_buildings
from .staff import managed_ahu, managed_organisation
from .technician import unit_records_context


def _ahu_number(
    name: str, quantity: str | None = None, *, required: bool = False, hint: str = "", per_cent: bool = False
) -> Field:
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
        per_cent=per_cent,
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
            per_cent=True,
            hint="Outdoor air as a share of the supply airflow at minimum, in % (25 for a quarter).",
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


def _check_unit(request, *, fields: list[Field], ahu: AHU | None, buildings: list[Building], kept: dict):
    """Check the posted unit form: (clean values, refusals, the values as typed, the unit's building); nothing is
    saved. A tag another unit of the building has is refused; a field not sent keeps ``kept`` (an edited unit)."""
    # A field the form did not send keeps its value (an older form, or a page that shows fewer fields).
    post = request.POST.copy()
    for f in fields:
        if f.name not in post and f.kind != "bool" and ahu is not None:
            post[f.name] = str(kept.get(f.name, ""))
    # Dates are judged on the day of the unit's site (of the building chosen for a new one).
    chosen = ahu.building if ahu else next((b for b in buildings if str(b.pk) == post.get("building")), None)
    clean, errors = read_fields(
        fields, post, system=request.user.unit_system, today=today_for(chosen.site if chosen else request.user)
    )
    values = {f.name: post.get(f.name, "") for f in fields}
    values["full_outdoor_air"] = clean.get("full_outdoor_air")
    building = ahu.building if ahu else next((b for b in buildings if str(b.pk) == clean.get("building")), None)
    if building is not None and clean.get("tag"):
        taken = _tag_taken(building, clean["tag"], ahu=ahu)
        if taken:
            errors.add("tag", taken)
    return clean, errors, values, building


def _unit_form(request, *, ahu: AHU | None):
    """Add a unit to a building of a site the person manages, or edit one."""
    system = request.user.unit_system
    fields = unit_fields(status=ahu.status if ahu else None)
    buildings = list(managed_buildings(request).order_by("site__name", "name"))
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
        values = {f.name: shown_value(f, AHU._meta.get_field(f.name).get_default(), system) for f in fields[1:]}
        values["building"] = request.GET.get("building", "")
        values["design_min_oa_fraction"] = ""
    else:
        values = {f.name: shown_value(f, getattr(ahu, f.name), system) for f in fields}
    errors: dict = {}
    if request.method == "POST":
        clean, errors, values, building = _check_unit(request, fields=fields, ahu=ahu, buildings=buildings, kept=values)
        if not errors:
            clean.pop("building", None)
            try:
                if ahu is None:
                    ahu = inventory_services.ahu_create(by=request.user, building=building, **clean)
                    messages.success(request, f"{ahu.display_name} added. Add its components next.")
                else:
                    inventory_services.ahu_update(ahu=ahu, by=request.user, **clean)
                    messages.success(request, f"{ahu.display_name} saved.")
                    say_saved_warnings(request, inventory_services.unit_warnings(ahu=ahu, system=system))
                return redirect("frontend:registry_unit", pk=ahu.pk)
            except ValidationError as exc:
                errors = service_errors(exc)
                if ahu is not None and ahu.pk is None:
                    ahu = None
            if ahu is not None:
                ahu.refresh_from_db()
    values["full_outdoor_air"] = bool(values.get("full_outdoor_air"))
    rows = field_rows(fields, values=values, errors=errors, system=system)
    if ahu is None:
        return form_page(
            request,
            title="Add a unit",
            rows=rows,
            errors=errors,
            back=reverse("frontend:registry"),
            submit="Add unit",
            status=400 if errors else 200,
        )
    return form_page(
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
    managed_organisation(request)
    return _unit_form(request, ahu=None)


@login_required
def unit_edit(request, pk):
    return _unit_form(request, ahu=managed_ahu(request, pk))


@login_required
def unit_move(request, pk):
    ahu = managed_ahu(request, pk)
    org_id = ahu.building.site.organisation_id
    choices = tuple(
        (b.pk, f"{b.site.name} · {b.name}")
        for b in managed_buildings(request).filter(site__organisation_id=org_id).order_by("site__name", "name")
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
        clean, errors = read_fields(
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
                    errors = service_errors(exc)
                else:
                    messages.success(request, f"{ahu.tag} moved to {target.site.name} · {target.name}.")
                    return redirect("frontend:registry_unit", pk=ahu.pk)
    rows = field_rows([field], values=values, errors=errors, system=request.user.unit_system)
    return form_page(
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


@login_required
def unit_retire(request, pk):
    ahu = managed_ahu(request, pk)
    errors: dict = {}
    values: dict = {}
    open_work = list(ahu.work_orders.filter(state__in=["planned", "assigned", "in_progress"]).order_by("due_date"))
    if ahu.status == AHU.Status.RETIRED:
        errors = {"__all__": [f"{ahu.display_name} is already retired."]}
    elif request.method == "POST":
        clean, errors = read_fields(
            [REASON], request.POST, system=request.user.unit_system, today=today_for(ahu.building.site)
        )
        values = {"reason": request.POST.get("reason", "")}
        if not errors:
            try:
                cancelled = unit_retire_service(ahu=ahu, by=request.user, reason=clean["reason"])
            except ValidationError as exc:
                errors = service_errors(exc)
            else:
                more = f" {count_text(cancelled, 'open visit')} cancelled." if cancelled else ""
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
            "rows": field_rows([REASON], values=values, errors=errors, system=request.user.unit_system),
            "loose": errors.get("__all__", []) + errors.get("status", []) + errors.get("work", []),
            "back": reverse("frontend:registry_unit", args=[ahu.pk]),
            "done": ahu.status == AHU.Status.RETIRED,
        },
        status=400 if errors and request.method == "POST" else 200,
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
            unit = unit_text(f, system)
            shown = to_display(value=value, quantity=f.quantity, system=system) if f.quantity else value
            shown = value * 100 if f.per_cent else shown
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
    ahu = managed_ahu(request, pk)
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


def unit_form_initial(*, ahu: AHU, system: str) -> dict:
    """The unit form as it opens for ``ahu``: each field's value in the person's units (tests post it back)."""
    return {f.name: shown_value(f, getattr(ahu, f.name), system) for f in unit_fields(status=ahu.status)}
