"""The checklist library's newest templates: read with their items once per process, a new version seen at once."""

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from inspections.models import ChecklistItem, ChecklistTemplate
from inspections.services import templates_current

pytestmark = pytest.mark.django_db


def test_the_newest_templates_are_read_once_and_a_new_version_is_seen_at_once():
    """The second ask reads only which versions there are (the rows of an installed version never change); a
    version installed meanwhile (by another process, say) is the newest at the next ask, with its own items."""
    first = templates_current(codes=["drain_pan"])["drain_pan"]
    with CaptureQueriesContext(connection) as seen:
        again = templates_current(codes=["drain_pan"])["drain_pan"]
    assert again.pk == first.pk and len(seen) == 1, [q["sql"] for q in seen.captured_queries]
    newer = ChecklistTemplate.objects.create(
        code="drain_pan", version=first.version + 1, title="Condensate drain pan (new)", cautions=[]
    )
    ChecklistItem.objects.create(template=newer, position=0, key="pan_condition", kind="check", label="Pan sound")
    now = templates_current(codes=["drain_pan", "visit"])
    assert (now["drain_pan"].pk, now["drain_pan"].title) == (newer.pk, "Condensate drain pan (new)")
    assert [i.label for i in now["drain_pan"].items.all()] == ["Pan sound"]
    assert set(now) == {"drain_pan", "visit"}
