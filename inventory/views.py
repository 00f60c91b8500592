"""Label pages: what a phone opens after scanning the QR code on a unit or a component."""

from django.contrib.auth.decorators import login_required
from django.http import Http404, HttpResponse
from django.shortcuts import redirect, render
from django.urls import NoReverseMatch, reverse

from .models import AHU
from .selectors import component_tree, label_lookup
from .services import label_absolute_url, label_qr_svg
from .specs import spec_fields


def _visible_or_404(request, code):
    obj = label_lookup(user=request.user, code=code)
    if obj is None:
        raise Http404("No unit or component with this label that you may see.")
    return obj


@login_required
def label(request, code: str):
    """Send a scanned label to the unit page; a component label opens its unit at that component."""
    obj = _visible_or_404(request, code)
    ahu = obj if isinstance(obj, AHU) else obj.ahu
    try:
        target = reverse("frontend:unit", kwargs={"code": ahu.label_code})
    except NoReverseMatch:
        target = None
    if target:
        return redirect(target if obj is ahu else f"{target}#component-{obj.label_code}")
    return render(
        request,
        "inventory/unit.html",
        {
            "ahu": ahu,
            "focus": None if obj is ahu else obj,
            "tree": _annotated(component_tree(ahu=ahu)),
            "label_url": label_absolute_url(code=ahu.label_code),
        },
    )


@login_required
def label_qr(request, code: str):
    obj = _visible_or_404(request, code)
    response = HttpResponse(label_qr_svg(code=obj.label_code), content_type="image/svg+xml")
    response["Cache-Control"] = "private, max-age=86400"
    return response


def _annotated(nodes):
    """Attach labelled spec rows (label, value, unit) to each node for the template."""
    for node in nodes:
        comp = node["component"]
        node["spec_rows"] = [
            (f.label, comp.specs[f.name], f.unit) for f in spec_fields(comp.kind) if f.name in comp.specs
        ]
        _annotated(node["children"])
    return nodes
