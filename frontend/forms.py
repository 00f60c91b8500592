"""Django forms of the staff pages: each reads one posted form into clean values or messages at its fields.

A field's message names the field, the value and what is allowed (STYLE.md); nothing is saved from a form that
is not valid.
"""

from __future__ import annotations

import datetime as dt

from django import forms
from django.core.exceptions import ValidationError

from accounts.inputs import INT32_MAX, FieldErrors, check_integer, day_refusal, parse_day
from scheduling.selectors import WARNING_CODES
from scheduling.services.work_orders import no_technician


class AssignForm(forms.Form):
    """The board's row form: a technician, the day the visit is planned for and the version the page was read at.

    Fields are read raw (``forms.Field``) so each refusal says the value as it was sent, in this page's words.
    ``scheduled_for`` absent leaves the plan as it is (``plan`` is False); present and empty takes it off.
    """

    assignee = forms.Field(required=False)
    scheduled_for = forms.Field(required=False)
    version = forms.Field(required=False)
    confirm_warnings = forms.BooleanField(required=False)  # "Assign anyway" on the warnings page
    confirm_over_capacity = forms.BooleanField(required=False)  # its older name, still read

    @property
    def seen(self) -> set[str]:
        """The warnings already read, by code, sent by "Assign to ... instead" (unknown codes are ignored)."""
        return {code for code in self.data.getlist("seen_warnings") if code in WARNING_CODES}

    @property
    def confirmed(self) -> bool:
        return bool(self.cleaned_data.get("confirm_warnings") or self.cleaned_data.get("confirm_over_capacity"))

    def __init__(self, data, *, technicians) -> None:
        super().__init__(data)
        self.technicians = list(technicians)

    @property
    def plan(self) -> bool:
        return "scheduled_for" in self.data

    def clean_assignee(self):
        raw = self.cleaned_data["assignee"] or ""
        technician = next((t for t in self.technicians if str(t.pk) == raw), None)
        if technician is None:
            raise ValidationError(f"Technician: {no_technician(raw)}; choose one from the list.")
        return technician

    def clean_scheduled_for(self) -> dt.date | None:
        raw = (self.cleaned_data["scheduled_for"] or "").strip()
        if not raw:
            return None
        day = parse_day(raw)
        if day is None:
            raise ValidationError(f"{day_refusal(raw, label='Day')}.")
        return day

    def clean_version(self) -> int | None:
        """The version as a whole number, None when missing or unreadable: the view refuses that as a stale
        page (someone changed it meanwhile), never as "skip the check"."""
        return check_integer(
            self.cleaned_data["version"], key="version", label="Version", errors=FieldErrors(), minimum=1,
            maximum=INT32_MAX,
        )  # fmt: skip
