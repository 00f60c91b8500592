"""Checklist templates, inspections and their readings, evaluations, findings, photos, amendments.

A filled inspection points at the checklist items (and so the template
version) it was filled against; templates are never edited in place, a change
is a new version. A signed inspection is never edited: corrections are
``Amendment`` rows that point to it.

One module per group: ``templates`` (checklist templates and items), ``visits`` (inspections, readings,
evaluations, photos, amendments), ``findings``; the package answers with their names.
"""

from __future__ import annotations

from .findings import Finding, finding_age_days
from .templates import ChecklistItem, ChecklistTemplate
from .visits import VERDICT_CHOICES, Amendment, Evaluation, Inspection, Photo, Reading

__all__ = [
    "VERDICT_CHOICES",
    "Amendment",
    "ChecklistItem",
    "ChecklistTemplate",
    "Evaluation",
    "Finding",
    "Inspection",
    "Photo",
    "Reading",
    "finding_age_days",
]
