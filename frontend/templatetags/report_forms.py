"""A report request form's state after a refused request: what was typed and each message at its field.

``frontend.views.records.record_request`` keeps them in the session and sends the person back to the page;
the form of that kind takes them once (``{% report_form "compliance" as f %}``) and shows them.
"""

from django import template

from reports.services import PDFA_KINDS

register = template.Library()

FORM_STATE = "report_form"
# The fields each form shows; a message about anything else (a hidden unit, site or work order id) reads
# above the form's button instead.
SHOWN = {
    "compliance": ("start", "end", "pdfa"),
    "unit_history": ("start", "end", "pdfa"),
    "inspection": ("pdfa",),
    "labels": ("layout",),
}


@register.simple_tag(takes_context=True)
def report_form(context, kind: str) -> dict:
    """{"values": {...}, "errors": {field: message}, "pdfa_offered": bool} for the form of ``kind``; the
    state is used once (a reload shows the form fresh)."""
    request = context.get("request")
    state = {}
    session = getattr(request, "session", None)
    if session is not None:
        kept = session.get(FORM_STATE)
        if isinstance(kept, dict) and kept.get("kind") == kind:
            state = session.pop(FORM_STATE)
    errors = dict(state.get("errors") or {})
    shown = SHOWN.get(kind, ())
    return {
        "other": [text for key, text in errors.items() if key not in shown],
        "values": state.get("values") or {},
        "errors": errors,
        "pdfa_offered": kind in PDFA_KINDS,
        "pdfa_on": (state.get("values") or {}).get("pdfa") in ("1", "on"),
    }
