"""Factories for inspections: a visit ready to be filled, and sync forms as the phone sends them."""

from __future__ import annotations

import base64
import datetime as dt
import io
import uuid

from PIL import Image

from accounts.models import Role
from scheduling.models import WorkOrder
from scheduling.services import task_library_install

from .accounts import OrganisationFactory, make_person
from .inventory import BuildingFactory, SiteFactory, make_full_unit
from .scheduling import WorkOrderFactory, add_task

FINISHED = dt.datetime(2025, 3, 3, 9, 30, tzinfo=dt.UTC)


def image_bytes(fmt: str = "JPEG", size: tuple[int, int] = (64, 48), exif: bool = False) -> bytes:
    img = Image.new("RGB", size, (120, 140, 160))
    out = io.BytesIO()
    kwargs = {}
    if exif:
        e = Image.Exif()
        e[0x010F] = "Invented Camera Maker"  # Make
        e[0x0131] = "secret-firmware"  # Software
        kwargs["exif"] = e.tobytes()
    img.save(out, format=fmt, **kwargs)
    return out.getvalue()


def data_url(data: bytes, mime: str = "image/jpeg") -> str:
    return f"data:{mime};base64,{base64.b64encode(data).decode()}"


def signature(name: str = "Ana Field", at: dt.datetime = FINISHED) -> dict:
    return {"name": name, "image": data_url(image_bytes("PNG", (200, 80)), "image/png"), "signed_at": at.isoformat()}


def make_visit(*, tasks: list[str], organisation=None, ahu=None, technician=None, **ahu_fields):
    """An assigned preventive work order on a full unit, with library tasks for ``tasks``."""
    organisation = organisation or OrganisationFactory()
    if ahu is None:
        site = SiteFactory(organisation=organisation)
        ahu = make_full_unit(building=BuildingFactory(site=site), **ahu_fields)
    technician = technician or make_person(
        organisation=organisation, role=Role.TECHNICIAN, first_name="Ana", last_name="Field"
    )
    task_library_install()
    wo = WorkOrderFactory(
        ahu=ahu,
        organisation=organisation,
        assignee=technician,
        state=WorkOrder.State.ASSIGNED,
        title="Quarterly service",
        due_date=FINISHED.date(),
    )
    tasks_add(wo, tasks, key="test")
    return wo, technician


def tasks_add(wo, codes: list[str], *, key: str) -> None:
    """The library tasks ``codes`` on ``wo`` for the whole unit, due with it (``add_task`` for each)."""
    for code in codes:
        add_task(wo, code, key=key)


def component(ahu, name: str):
    return ahu.components.get(name=name)


def sync_form(
    wo,
    readings: list[dict],
    *,
    client_uuid=None,
    version=None,
    unit_system="si",
    photos=None,
    finished_at: dt.datetime = FINISHED,
    sign=True,
) -> dict:
    form = {
        "client_uuid": str(client_uuid or uuid.uuid4()),
        "work_order": str(wo.public_id),
        "work_order_version": version if version is not None else wo.version,
        "unit_system": unit_system,
        "started_at": (finished_at - dt.timedelta(minutes=45)).isoformat(),
        "finished_at": finished_at.isoformat(),
        "readings": readings,
        "photos": photos or [],
    }
    if sign:
        form["signature"] = signature(at=finished_at)
    return form


def r(item: str, value, component=None, note: str = "") -> dict:
    return {
        "item": item,
        "component": component.label_code if component is not None else None,
        "value": value,
        "note": note,
    }


def filter_form(wo, **kw) -> dict:
    """A complete filter-check form for ``wo`` as the phone sends it: run hours, both banks read, seated, loaded."""
    ahu = wo.ahu
    readings = [r("visit.run_hours", 1200)]
    for name, dp in (("Pre-filters", 80), ("Final filters", 150)):
        bank = component(ahu, name)
        readings += [
            r("filter_check.dp", dp, bank),
            r("filter_check.seated", "ok", bank),
            r("filter_check.media", "loaded", bank),
        ]
    return sync_form(wo, readings, **kw)


SYNC_URL = "/api/inspections/sync/"


def sync_filter_visit(
    api_client, *, ahu, technician, finished_at: dt.datetime, hours, airflow_ls, final_dp, after=None, pre_dp=60
) -> dict:
    """A filter check of both banks of ``ahu`` (pre-filters at ``pre_dp``, final filters at ``final_dp`` Pa) sent
    through the sync API, with a filter change when ``after`` (the new final filters' Pa) is given; the server's
    result for the form, stored or flagged. The caller sets the clock (the server judges the form at "now")."""
    tasks = ["filter_check"] + (["filter_replace"] if after is not None else [])
    wo, _ = make_visit(tasks=tasks, ahu=ahu, organisation=ahu.building.site.organisation, technician=technician)
    pre, final = component(ahu, "Pre-filters"), component(ahu, "Final filters")
    readings = [r("visit.run_hours", hours), r("visit.supply_airflow", airflow_ls)]  # the form takes L/s
    for bank, value in ((pre, pre_dp), (final, final_dp)):
        readings += [
            r("filter_check.dp", value, bank),
            r("filter_check.seated", "ok", bank),
            r("filter_check.media", "loaded", bank),
        ]
    if after is not None:
        for bank, value in ((pre, 52), (final, after)):
            readings += [r("filter_replace.replaced", "ok", bank), r("filter_replace.dp_after", value, bank)]
    api_client.force_authenticate(technician)
    res = api_client.post(SYNC_URL, {"forms": [sync_form(wo, readings, finished_at=finished_at)]}, format="json")
    [result] = res.json()["results"]
    assert result["status"] in ("stored", "flagged"), result
    return result
