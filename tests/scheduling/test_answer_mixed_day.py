"""A mixed working day, counted: after each write of the day (a form sent, a visit reassigned, a run-hour reading,
a visit started, a visit planned, corrective work proposed) every technician polls today and the supervisor polls
the board. Only the answers the write concerns are built again (the todays of the technicians whose own work it
changed, and the board when the organisation's work changed); every other poll is answered from the kept answer
(one query), and every answer served is the one a fresh build gives.

Under the former scheme (one version per organisation, moved by every write) every poll after every write was a
build: 24 of 24 todays here; now 5. Counted, never timed. Dates are fixed (``?day=`` and ``?week=``).
"""

import datetime as dt

import pytest

from accounts.answers import answer_cache_clear
from accounts.models import Role
from inspections.services.sync import inspection_sync
from inventory.today import today_for
from scheduling.models import WorkOrder
from scheduling.services import (
    corrective_work_order_propose,
    meter_reading_record,
    work_order_assign,
    work_order_schedule,
    work_order_transition,
)
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inspections import FINISHED, make_visit
from tests.scheduling.test_answer_invalidation import BOARD_URL, DAY, TODAY_URL, client_for, complete_form, poll

pytestmark = pytest.mark.django_db(transaction=True)


@pytest.fixture
def day():
    answer_cache_clear()
    org = OrganisationFactory()
    visits = [make_visit(tasks=["filter_check"], organisation=org) for _ in range(4)]
    sup = make_person(organisation=org, role=Role.SUPERVISOR)
    yield {
        "org": org,
        "visits": [wo for wo, _ in visits],
        "techs": [tech for _, tech in visits],
        "sup": sup,
        "clients": {f"today {n}": client_for(tech) for n, (_, tech) in enumerate(visits)} | {"board": client_for(sup)},
    }
    answer_cache_clear()


def _url(name: str) -> str:
    return BOARD_URL if name == "board" else TODAY_URL


def _poll_all(clients) -> tuple[set[str], dict[str, str]]:
    """Every answer polled once: (the names of those built, not kept; the ETag of each)."""
    built, etags = set(), {}
    for name, client in clients.items():
        response, queries = poll(client, _url(name))
        if queries > 1:
            built.add(name)
        etags[name] = response["ETag"]
    return built, etags


def _fresh(clients) -> dict[str, str]:
    answer_cache_clear()
    return {name: client.get(_url(name))["ETag"] for name, client in clients.items()}


def test_a_mixed_day_builds_only_the_answers_each_write_concerns(day):
    wo, tech, sup = day["visits"], day["techs"], day["sup"]
    later = today_for(wo[2].ahu.building.site) + dt.timedelta(days=30)  # the service refuses a past day
    writes = [
        (
            "technician 0 sends the finished form of their visit",
            lambda: inspection_sync(user=tech[0], forms=[complete_form(wo[0])]),
            {"today 0", "board"},
        ),
        (
            "the supervisor gives technician 1's visit to technician 2",
            lambda: work_order_assign(work_order=wo[1], assignee=tech[2], by=sup),
            {"today 1", "today 2", "board"},
        ),
        (
            "technician 3 records a run-hour reading",
            lambda: meter_reading_record(ahu=wo[3].ahu, hours=1500, taken_at=FINISHED, by=tech[3]),
            set(),
        ),
        (
            "technician 3 starts their visit",
            lambda: work_order_transition(work_order=wo[3], to_state=WorkOrder.State.IN_PROGRESS, by=tech[3]),
            {"today 3", "board"},
        ),
        (
            "the supervisor plans technician 2's own visit for a later day",
            lambda: work_order_schedule(work_order=wo[2], day=later, by=sup),
            {"today 2", "board"},
        ),
        (
            "technician 1 proposes corrective work",
            lambda: corrective_work_order_propose(
                ahu=wo[1].ahu, title="Replace belt", reason="belt worn", by=tech[1], observed_on=DAY
            ),
            {"board"},
        ),
    ]
    clients = day["clients"]
    _poll_all(clients)  # built once
    assert _poll_all(clients)[0] == set(), "every answer kept"
    todays_built = 0
    for words, write, concerned in writes:
        write()
        built, served = _poll_all(clients)
        assert built == concerned, f"{words}: built {sorted(built)}, expected {sorted(concerned)}"
        assert served == _fresh(clients), f"{words}: a kept answer is stale"
        _poll_all(clients)  # kept again for the next write
        todays_built += len(built - {"board"})
    polls = len(writes) * len(tech)
    assert (todays_built, polls) == (5, 24), "todays built after the day's writes, of the todays polled"
