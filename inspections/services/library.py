"""Install the checklist library (inspections/checklists.py) as template rows."""

import functools
from typing import Any

from django.core.exceptions import ValidationError
from django.db import IntegrityError, transaction

from inspections import checklists
from inspections.checklist_items import band_order_problem
from inspections.models import ChecklistItem, ChecklistTemplate

_ITEM_FIELDS = [f.name for f in ChecklistItem._meta.get_fields() if f.concrete and f.name not in {"id", "template"}]


def checklist_library_install() -> list[ChecklistTemplate]:
    """Create every template version of the library that is not in the database yet.

    Idempotent: an existing (code, version) is left untouched, so inspections
    filled against it keep pointing at exactly what they were filled against.
    A template to install with an item whose band is out of order is refused before anything is written
    (``ValidationError`` keyed by the item's API key, naming its limits and what is allowed).
    """
    out = []
    existing = {(t.code, t.version): t for t in ChecklistTemplate.objects.all()}
    template_check([s for s in checklists.all_templates() if (s["code"], s["version"]) not in existing])
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


def template_check(specs: list[dict[str, Any]]) -> None:
    """Refuse library templates with an item whose ok/watch band is out of order (``band_order_problem``): every such
    item, by API key, with its limits and what is allowed."""
    problems = {
        f"{spec['code']}.{it['key']}": [problem]
        for spec in specs
        for it in spec["items"]
        if (problem := band_order_problem(it))
    }
    if problems:
        raise ValidationError(problems)


def templates_current(*, codes: list[str] | None = None) -> dict[str, ChecklistTemplate]:
    """The newest version of each template (installing the library on first use), items prefetched.

    One query asks which versions there are; the newest ones are read with their items once per process
    (``_templates_read``): a version is never changed once installed, a new one is a new row."""
    newest = _newest_versions()
    library = {(t["code"], t["version"]) for t in checklists.all_templates()}
    if not library <= {(code, version) for code, version, _pk in newest}:
        checklist_library_install()
        newest = _newest_versions()
    kept = _templates_read(newest)
    return {code: t for code, t in kept.items() if codes is None or code in codes}


def _newest_versions() -> tuple[tuple[str, int, int], ...]:
    """(code, version, id) of every template's newest version, by code."""
    newest: dict[str, tuple[str, int, int]] = {}
    for code, version, pk in ChecklistTemplate.objects.order_by("code", "version").values_list("code", "version", "pk"):
        newest[code] = (code, version, pk)  # the later version wins
    return tuple(newest.values())


@functools.lru_cache(maxsize=8)
def _templates_read(newest: tuple[tuple[str, int, int], ...]) -> dict[str, ChecklistTemplate]:
    """The template rows ``newest`` names ((code, version, id) each) with their items, by code: kept for the
    process (``config.caches.clear_module_caches`` forgets them), as installed versions never change. Read only,
    shared by every request: nothing may change them."""
    rows = {
        t.pk: t for t in ChecklistTemplate.objects.filter(pk__in=[pk for *_, pk in newest]).prefetch_related("items")
    }
    return {code: rows[pk] for code, _version, pk in newest}


def cache_clear() -> None:
    """Forget the checklist templates read and kept in this process (``config.caches.clear_module_caches``)."""
    _templates_read.cache_clear()
