"""Install the checklist library (inspections/checklists.py) as template rows."""

from django.db import IntegrityError, transaction

from inspections import checklists
from inspections.models import ChecklistItem, ChecklistTemplate

_ITEM_FIELDS = [f.name for f in ChecklistItem._meta.get_fields() if f.concrete and f.name not in {"id", "template"}]


def checklist_library_install() -> list[ChecklistTemplate]:
    """Create every template version of the library that is not in the database yet.

    Idempotent: an existing (code, version) is left untouched, so inspections
    filled against it keep pointing at exactly what they were filled against.
    """
    out = []
    existing = {(t.code, t.version): t for t in ChecklistTemplate.objects.all()}
    for spec in checklists.all_templates():
        template = existing.get((spec["code"], spec["version"]))
        if template is None:
            try:
                with transaction.atomic():
                    template = ChecklistTemplate.objects.create(
                        code=spec["code"],
                        version=spec["version"],
                        title=spec["title"],
                        cautions=list(spec["cautions"]),
                    )
                    ChecklistItem.objects.bulk_create(
                        ChecklistItem(
                            template=template, position=i, **{k: v for k, v in it.items() if k in _ITEM_FIELDS}
                        )
                        for i, it in enumerate(spec["items"])
                    )
            except IntegrityError:  # installed concurrently by another request
                template = ChecklistTemplate.objects.get(code=spec["code"], version=spec["version"])
        out.append(template)
    return out


def templates_current(*, codes: list[str] | None = None) -> dict[str, ChecklistTemplate]:
    """The newest version of each template (installing the library on first use), items prefetched."""
    wanted = set(codes) if codes is not None else None
    qs = ChecklistTemplate.objects.order_by("code", "-version").prefetch_related("items")
    if wanted is not None:  # only the wanted templates' versions and items are read (each synced form asks)
        qs = qs.filter(code__in=wanted)
    have = set(ChecklistTemplate.objects.values_list("code", "version"))
    if not {(t["code"], t["version"]) for t in checklists.all_templates()} <= have:
        checklist_library_install()
    latest: dict[str, ChecklistTemplate] = {}
    for t in qs:
        if (wanted is None or t.code in wanted) and t.code not in latest:
            latest[t.code] = t
    return latest
