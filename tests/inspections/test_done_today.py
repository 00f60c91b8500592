"""The visits a technician finished today (inspections.done_today), each on its own site's calendar."""

from __future__ import annotations

import datetime as dt

import pytest

from inspections.done_today import done_today_for
from inspections.services import inspection_sync
from tests.factories.inspections import component, make_visit, r, sync_form

pytestmark = pytest.mark.django_db

# 2 Dec 2026, 13:30 UTC: 3 Dec 00:30 in Sydney (UTC+11 in December, from memory), 2 Dec 14:30 in Amsterdam.
NOW = dt.datetime(2026, 12, 2, 13, 30, tzinfo=dt.UTC)


def _signed(wo, technician, finished_at):
    bank = component(wo.ahu, "Final filters")
    form = sync_form(wo, [r("filter_check.dp", 150, bank)], finished_at=finished_at)
    [result] = inspection_sync(user=technician, forms=[form])
    assert result["status"] in ("stored", "flagged"), result


def test_today_is_the_sites_day_not_the_servers(time_machine):
    """In Amsterdam a form signed at 09:00 local counts, one signed yesterday evening does not; in Sydney, where
    it is already 3 Dec, a form signed at 12:10 UTC (23:10 on 2 Dec there) is yesterday's. Another technician's
    form is not theirs."""
    time_machine.move_to(NOW)
    wo, tech = make_visit(tasks=["filter_check"])
    site = wo.ahu.building.site
    site.time_zone = "Europe/Amsterdam"
    site.save(update_fields=["time_zone"])
    _signed(wo, tech, dt.datetime(2026, 12, 2, 8, 0, tzinfo=dt.UTC))  # 09:00 in Amsterdam
    yesterday, _ = make_visit(tasks=["filter_check"], ahu=wo.ahu, organisation=site.organisation, technician=tech)
    _signed(yesterday, tech, dt.datetime(2026, 12, 1, 20, 0, tzinfo=dt.UTC))  # 21:00 on 1 Dec there

    far, _ = make_visit(tasks=["filter_check"], organisation=site.organisation, technician=tech)
    far_site = far.ahu.building.site
    far_site.time_zone = "Australia/Sydney"
    far_site.save(update_fields=["time_zone"])
    _signed(far, tech, dt.datetime(2026, 12, 2, 12, 10, tzinfo=dt.UTC))  # 23:10 on 2 Dec in Sydney
    after_midnight, _ = make_visit(tasks=["filter_check"], ahu=far.ahu, organisation=site.organisation, technician=tech)
    _signed(after_midnight, tech, dt.datetime(2026, 12, 2, 13, 15, tzinfo=dt.UTC))  # 00:15 on 3 Dec there

    done = done_today_for(technician=tech, now=NOW)

    assert [(d.work_order_public_id, d.finished_time) for d in done] == [
        (str(wo.public_id), "09:00"),
        (str(after_midnight.public_id), "00:15"),
    ]
