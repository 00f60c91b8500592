"""Work-order titles fit their column (200 characters) whole: never a word cut in two ("…Sensor calibratio…")."""

import datetime as dt
import re

import pytest

from scheduling.engine import work_orders_generate
from scheduling.models import TaskDefinition, WorkOrder
from scheduling.services import corrective_work_order_propose
from scheduling.titles import TITLE_MAX, VISIT_PREFIX, title_fit, visit_title
from tests.factories.inventory import AHUFactory, make_full_unit

pytestmark = pytest.mark.django_db
MORE = re.compile(r", and (\d+) more tasks?$")


def shown_names(title: str) -> tuple[list[str], int]:
    """The task names a visit title lists and how many more it says there are."""
    body = title.removeprefix(VISIT_PREFIX)
    more = MORE.search(body)
    listed = body[: more.start()] if more else body
    return listed.split(", "), int(more.group(1)) if more else 0


def test_a_visit_title_lists_whole_task_names_and_counts_the_rest(library):
    """All library tasks on one visit: as many whole names as fit, then 'and N more tasks'; N adds up."""
    names = sorted({t.name for t in TaskDefinition.objects.filter(organisation__isnull=True)})
    title = visit_title(names)
    assert len(title) <= TITLE_MAX
    listed, more = shown_names(title)
    assert more > 0 and listed == names[: len(listed)] and len(listed) + more == len(names), title


def test_a_title_that_fits_is_left_alone():
    assert visit_title(["Heat recovery", "Drain pan and trap", "Heat recovery"]) == (
        "Preventive maintenance: Drain pan and trap, Heat recovery"
    )
    assert title_fit("Loose belt") == "Loose belt"


def test_a_long_free_title_is_cut_after_a_whole_word_with_an_ellipsis():
    text = "Sensor calibration check " * 12
    cut = title_fit(text)
    assert len(cut) <= TITLE_MAX and cut.endswith("…")
    assert text.startswith(cut.removesuffix("…")) and text[len(cut) - 1] == " ", cut  # the next character is a space
    assert title_fit("x" * 300) == "x" * (TITLE_MAX - 1) + "…"  # one endless word: nothing better than a cut


def test_generated_visits_name_their_tasks_whole(library):
    """A full unit a year into service gets its annual visit with a dozen tasks: every generated title fits
    and every name it lists is one of the visit's own tasks, whole."""
    ahu = make_full_unit(service_start=dt.date(2024, 3, 3))
    work_orders_generate(organisation=ahu.building.site.organisation, today=dt.date(2025, 3, 3), horizon_days=60)
    orders = list(WorkOrder.objects.filter(ahu=ahu).prefetch_related("tasks__task"))
    assert orders
    shortened = 0
    for wo in orders:
        assert len(wo.title) <= TITLE_MAX, wo.title
        names = {t.task.name for t in wo.tasks.all()}
        listed, more = shown_names(wo.title)
        assert set(listed) <= names and len(listed) + more == len(names), (wo.title, names)
        shortened += more > 0
    assert shortened, [wo.title for wo in orders]  # the case the user met is exercised


def test_corrective_work_titles_are_cut_at_a_word():
    ahu = AHUFactory()
    title = "Damper not at commanded position — Outdoor-air damper " * 6
    wo = corrective_work_order_propose(ahu=ahu, title=title, reason="stuck")
    assert len(wo.title) <= TITLE_MAX and wo.title.endswith("…")
    assert title.startswith(wo.title.removesuffix("…")) and title[len(wo.title) - 1] == " ", wo.title
