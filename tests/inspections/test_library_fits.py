"""Every checklist template's text fits the column that stores it: PostgreSQL refuses a value longer than a
CharField's max_length (SQLite, the tests' default database, does not), so the library would not install there.
A glycol coil's freezing-point band names its sources at length (444 characters): ChecklistItem.limits_source is
a text field."""

from inspections import checklists
from inspections.models import ChecklistItem, ChecklistTemplate


def _limits(model) -> dict[str, int]:
    return {f.name: f.max_length for f in model._meta.fields if getattr(f, "max_length", None)}


def test_every_template_and_item_text_fits_its_column():
    item_limits, template_limits = _limits(ChecklistItem), _limits(ChecklistTemplate)
    too_long = []
    for t in checklists.all_templates():
        for k, v in t.items():
            if k in template_limits and isinstance(v, str) and len(v) > template_limits[k]:
                too_long.append((t["code"], k, len(v)))
        for it in t["items"]:
            for k, v in it.items():
                if k in item_limits and isinstance(v, str) and len(v) > item_limits[k]:
                    too_long.append((t["code"], it["key"], k, len(v)))
    assert not too_long
