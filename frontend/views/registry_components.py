"""Registry pages of a unit's parts: add one of a kind with its specifications, edit where it sits and its
specifications, retire it (and the parts inside it) with the history kept."""

from __future__ import annotations

import dataclasses

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.shortcuts import redirect, render
from django.urls import reverse

from accounts.inputs import FieldErrors, check_text
from engineering.formatting import count_text
from inventory import services as inventory_services
from inventory.models import AHU, Component, ComponentKind
from inventory.selectors import component_tree
from inventory.specs import spec_fields
from inventory.today import today_for

from ..specs_form import spec_initial, spec_rows, specs_from_post
from .registry_form import (
    REASON,
    Field,
    allowed_text,
    field_rows,
    form_page,
    read_fields,
    say_saved_warnings,
    service_errors,
    spec_field_rows,
)
from .registry_records import managed_component
from .staff import managed_ahu

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


def _choose_kind(request, *, ahu: AHU, kind: str, back: str):
    """The first step of adding a part: choose its kind (a kind typed that is not one of them is refused)."""
    system = request.user.unit_system
    kind_field = Field("kind", "Kind of part", kind="choice", required=True, choices=KIND_CHOICES)
    errors = {}
    if kind:
        errors = {
            "kind": [
                f"Kind of part: {kind[:40]!r} is not one of the choices; allowed: {allowed_text(kind_field, system)}"
            ]
        }
    rows = field_rows([kind_field], values={"kind": kind}, errors=errors, system=system)
    return render(
        request,
        "frontend/registry/choose_kind.html",
        {"ahu": ahu, "rows": rows, "back": back, "refused": bool(errors)},
        status=400 if errors else 200,
    )


def _new_component_fields(ahu: AHU) -> list[Field]:
    """The fields of a new part besides its specifications: name, the part it is inside, installed on, place."""
    return [
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


@login_required
def component_new(request, pk):
    """Add a part of one kind to a unit with its specifications (the kind chosen first)."""
    ahu = managed_ahu(request, pk)
    system = request.user.unit_system
    back = reverse("frontend:registry_unit", args=[ahu.pk])
    if ahu.status == AHU.Status.RETIRED:
        messages.error(request, f"{ahu.display_name} is retired; parts cannot be added to it.")
        return redirect(back)
    kind = request.POST.get("kind") or request.GET.get("kind", "")
    if kind not in SPECS_KINDS:
        return _choose_kind(request, ahu=ahu, kind=kind, back=back)
    fields = _new_component_fields(ahu)
    last = ahu.components.order_by("-position").values_list("position", flat=True).first()
    next_place = min((last or 0) + 1, POSITION_MAX)
    values: dict = {"name": dict(KIND_CHOICES)[kind], "parent": "", "position": str(next_place)}
    spec_values: dict = {}
    errors: dict = {}
    if request.method == "POST":
        # A form without the place field (an older page) puts the part last; a place emptied is refused.
        post = request.POST.copy()
        post.setdefault("position", str(next_place))
        clean, errors = read_fields(fields, post, system=system, today=today_for(ahu.building.site))
        values = {f.name: post.get(f.name, "") for f in fields}
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
                    position=clean["position"],
                )
            except ValidationError as exc:
                errors = service_errors(exc)
            else:
                messages.success(request, f"{component.name} added to {ahu.display_name}.")
                _warn(request, component, system)
                return redirect(back)
    rows = field_rows(fields, values=values, errors=errors, system=system)
    spec = spec_field_rows(kind, values=spec_values, errors=errors, system=system)
    return form_page(
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


def _warn(request, component: Component, system: str) -> None:
    """Say what was saved but is unlikely (inventory.services.component_warnings) on the page shown next."""
    warnings = inventory_services.component_warnings(component=component, system=system)
    say_saved_warnings(request, [(component, w) for w in warnings])


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
        # Required: an emptied place is refused naming the range, never silently kept (the column holds no "none").
        required=True,
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


def _check_name_and_place(
    component: Component, *, post, name: str, place: list[Field], kept: dict, system: str
) -> tuple[str | None, dict, dict, FieldErrors]:
    """Check an edited part's name and place (``place``: the part it is inside, its place, installed on), as
    (clean name, clean place values, the values as typed, refusals); nothing is saved. A part cannot be inside
    itself or inside a part it contains; a form without the place fields keeps ``kept``."""
    ahu = component.ahu
    checked = FieldErrors()
    clean_name = check_text(
        name, key="name", label="Name", max_length=COMPONENT_NAME_MAX, errors=checked, required=True
    )
    # A form without the place fields (an older page) keeps the part where it is.
    post = post.copy()
    for key, value in kept.items():
        post.setdefault(key, value)
    raw_parent = post.get("parent", "")
    inside = _descendants(component)
    if raw_parent == str(component.pk):
        checked.add("parent", f"Part of: {component.name} cannot be inside itself; allowed: {place[0].allowed}")
    elif raw_parent.isdigit() and int(raw_parent) in inside:
        child = ahu.components.get(pk=int(raw_parent))
        checked.add(
            "parent",
            f"Part of: {child.name} is inside {component.name}, so {component.name} cannot go inside it; "
            f"allowed: {place[0].allowed}",
        )
    clean, more = read_fields(place, post, system=system, today=today_for(ahu.building.site))
    for key, texts in more.items():
        if key not in checked:
            for text in texts:
                checked.add(key, text)
    values = {f.name: post.get(f.name, "") for f in place}
    return clean_name, clean, values, checked


@login_required
def component_edit(request, pk):
    """Edit a part: its name, where it sits (inside another part, its place along the airstream), when it was
    installed, and its specifications. A part cannot be inside itself or inside a part it contains."""
    component = managed_component(request, pk)
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
        clean_name, clean, values, checked = _check_name_and_place(
            component, post=request.POST, name=name, place=place, kept=values, system=system
        )
        errors.update(checked)
        if not errors:
            parent = ahu.components.filter(pk=clean["parent"]).first() if clean.get("parent") else None
            changes = {
                "name": clean_name,
                "specs": specs,
                "parent": parent,
                "installed_on": clean["installed_on"],
                "position": clean["position"],
            }
            try:
                inventory_services.component_update(component=component, by=request.user, **changes)
            except ValidationError as exc:
                errors = exc.message_dict if hasattr(exc, "error_dict") else {"__all__": exc.messages}
            else:
                messages.success(request, f"{component.name} saved.")
                _warn(request, component, system)
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
            "place": field_rows(shown_place, values=values, errors=errors, system=system),
            "name": name,
            "name_max": COMPONENT_NAME_MAX,
            "name_errors": errors.get("name", []),
            "errors": [text for key, texts in errors.items() if key not in shown for text in texts],
        },
        status=status,
    )


@login_required
def component_retire(request, pk):
    component = managed_component(request, pk)
    ahu = component.ahu
    back = reverse("frontend:registry_unit", args=[ahu.pk])
    errors: dict = {}
    values: dict = {}
    if component.retired_on is not None:
        errors = {"__all__": [f"{component.name} was retired on {component.retired_on:%d %b %Y}."]}
    elif request.method == "POST":
        today = today_for(ahu.building.site)
        clean, errors = read_fields([REASON], request.POST, system=request.user.unit_system, today=today)
        values = {"reason": request.POST.get("reason", "")}
        if not errors:
            try:
                retired = inventory_services.component_retire(
                    component=component, on=today, by=request.user, reason=clean["reason"]
                )
            except ValidationError as exc:
                errors = service_errors(exc)
            else:
                inside = f" with {count_text(len(retired) - 1, 'part')} inside it" if len(retired) > 1 else ""
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
            "rows": field_rows([REASON], values=values, errors=errors, system=request.user.unit_system),
            "loose": [t for k, ts in errors.items() if k != "reason" for t in ts],
            "back": back,
            "done": component.retired_on is not None,
        },
        status=400 if errors and request.method == "POST" else 200,
    )
