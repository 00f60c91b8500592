"""Twelve months (or more) of invented inspection history for the demo scenario.

Deterministic: the random numbers are seeded from the organisation's, site's
and unit's names (never row ids), so the same registry gives the same history. Every form goes through the real
sync service, so evaluations, findings, corrective work orders, meter
readings and completions are exactly what the live system would produce.
"""

from __future__ import annotations

import base64
import datetime as dt
import io
import random
import uuid

from django.db import transaction
from PIL import Image, ImageDraw

from accounts.models import Membership, Role
from engineering import units as eng_units
from engineering.glycol import glycol_freeze_point_c
from inventory.models import AHU
from scheduling.models import TaskDefinition, WorkOrder, WorkOrderTask
from scheduling.services import task_library_install
from scheduling.targets import task_targets
from scheduling.task_rows import work_order_task_rows

from .demo_calendar import VISIT_DAYS, freeze_test_visits, outdoor_c, part_load
from .evaluation.ventilation_checks import required_outdoor_airflow_m3s
from .models import Inspection
from .services.sync import inspection_submit

NAMESPACE = uuid.UUID("6f1d1c52-2a55-4d0e-9a57-0c3b1d7e5a10")
HOURS_PER_DAY = 14.0  # offices: about 14 h/day, seven days of weekday-plus-weekend running averaged (invented)
# Units whose latest freeze-protection test fails (site code, unit tag): "stage_late" = stage 1 of the
# electric preheater switched on 4.5 K below its set point. The demo's one unit "not ready" for winter.
FREEZE_FAULTS = {("elderbank", "AHU-L1"): "stage_late"}
# The visit this many months back finds every unit running at part load (share of its design airflow): the
# supply airflow is read beside the filters, whose pressure drop is lower by the filter law's exponent, so the
# history shows a filter reading at reduced airflow that the evaluation corrects to design airflow. That
# visit does no ventilation check (outdoor air is judged at the unit's normal airflow).
REDUCED_AIRFLOW_MONTHS_AGO, REDUCED_AIRFLOW_SHARE = 2, 0.8


# What the demo technician writes beside the outdoor-air readings of a unit whose design minimum outdoor air is below
# what its space needs (ASHRAE 62.1, judged each visit): a failed reading comes with a note, as a real one would, so
# the supervisor's flagged forms hold what needs a decision, not a known design shortfall every month.
SHORT_DESIGN_NOTE = "outdoor air below what the space needs at the design minimum: known, raised for a design review"


def design_short_of_requirement(ahu: AHU) -> bool:
    """Whether the unit's design minimum outdoor airflow is below its space's requirement (the evaluation's own
    requirement, ``required_outdoor_airflow_m3s``)."""
    need = required_outdoor_airflow_m3s(ahu)
    design = (ahu.design_min_oa_fraction or 0) * (ahu.design_supply_airflow_m3s or 0)
    return need is not None and need > design


def _signature_png(name: str) -> str:
    img = Image.new("RGB", (240, 80), "white")
    draw = ImageDraw.Draw(img)
    draw.line([(10, 60), (60, 20), (100, 55), (150, 25), (230, 50)], fill="black", width=3)
    draw.text((10, 64), name[:30], fill="black")
    out = io.BytesIO()
    img.save(out, format="PNG")
    return "data:image/png;base64," + base64.b64encode(out.getvalue()).decode()


def demo_history_day(*, organisation) -> dt.date | None:
    """The day the organisation's demo history was loaded for (its last monthly visit + VISIT_DAYS), or None.

    A later ``load_demo`` keeps that history as it is (a real history does not move with the calendar)
    instead of writing a second one a day or a month later beside it.
    """
    from django.db.models import Max

    last = WorkOrderTask.objects.filter(
        work_order__organisation=organisation, occurrence_key__startswith="demo:"
    ).aggregate(last=Max("work_order__due_date"))["last"]
    return None if last is None else last + dt.timedelta(days=VISIT_DAYS)


@transaction.atomic
def _work_order(
    *,
    ahu: AHU,
    organisation,
    technician,
    due: dt.date,
    codes: list[str],
    targets: dict[str, list] | None = None,
    keys: dict[str, str] | None = None,
) -> WorkOrder:
    title = f"Monthly service {due:%Y-%m}"
    wo = WorkOrder.objects.filter(ahu=ahu, title=title, due_date=due).first()
    if wo is not None:
        return wo
    wo = WorkOrder.objects.create(
        organisation=organisation,
        ahu=ahu,
        title=title,
        due_date=due,
        scheduled_for=due,
        assignee=technician,
        state=WorkOrder.State.ASSIGNED,
    )
    tasks = {t.code: t for t in TaskDefinition.objects.filter(organisation=None, code__in=codes)}
    targets = targets or {}
    rows = work_order_task_rows(
        work_order=wo,
        tasks_on=[(tasks[c], comp) for c in codes if c in tasks for comp in targets.get(c, [None])],
        due=due,
        occurrence_key=lambda task: (keys or {}).get(task.code) or f"demo:{due:%Y-%m}:{wo.public_id.hex[:8]}",
    )
    WorkOrderTask.objects.bulk_create(rows)
    return wo


SYNC_DELAY = dt.timedelta(minutes=4)


def _received_after(*, inspection_id: int, finished: dt.datetime) -> None:
    """A demo form as received a few minutes after it was finished (its stored receipt and the phone times)."""
    inspection = Inspection.objects.get(pk=inspection_id)
    received = finished + SYNC_DELAY
    times = dict(inspection.phone_times or {})
    if "received_at" in times:
        times["received_at"] = received.isoformat()
    Inspection.objects.filter(pk=inspection.pk).update(received_at=received, phone_times=times)


def demo_history_load(*, organisation, today: dt.date, months: int = 12) -> dict[str, int]:
    """Monthly visits on every unit of the organisation for ``months`` months before ``today``.

    Filters load with run-hours (Δp rising by about 0.02–0.04 Pa per run-hour
    above the clean value, invented but typical) and are changed when they
    pass about 85 % of their span; outdoor temperatures follow the site's
    monthly normals; one unit develops a sticking outdoor-air damper and a
    drifting CO2 sensor, which become findings with corrective work.
    """
    task_library_install()
    tech_ms = (
        Membership.objects.filter(organisation=organisation, role=Role.TECHNICIAN)
        .select_related("user")
        .order_by("id")
        .first()
    )
    if tech_ms is None:
        raise ValueError(f"organisation {organisation} has no technician to sign the demo visits")
    tech = tech_ms.user
    sig = _signature_png(str(tech))
    counts = {"work_orders": 0, "inspections": 0, "findings": 0}
    ahus = AHU.objects.filter(building__site__organisation=organisation).select_related("building__site")
    for unit_no, ahu in enumerate(ahus.order_by("id")):
        # Seeded by names, not row ids: the same registry gives the same history on any database.
        rng = random.Random(f"{organisation.slug}:{ahu.building.site.code}:{ahu.tag}")
        site = ahu.building.site
        banks = list(ahu.components.filter(kind="filter_bank").order_by("position", "id"))
        dampers = list(ahu.components.filter(kind="damper").order_by("position", "id"))
        sensors = list(ahu.components.filter(kind="sensor", specs__measures="co2"))
        temp_sensors = list(ahu.components.filter(kind="sensor", specs__measures="temperature"))
        other_sensors = {
            kind: list(ahu.components.filter(kind="sensor", specs__measures=kind)) for kind in ("pressure", "humidity")
        }
        preheaters = list(ahu.components.filter(kind="electric_preheater").order_by("position", "id"))
        protected = bool(preheaters) or ahu.components.filter(kind="coil", specs__duty="preheat").exists()
        # Preheat and freeze protection are proven on the last visit before each freeze season.
        # Filed under the engine's own season key, so the scheduler knows that season's check is done.
        freeze_visits: dict[dt.date, str] = {}
        freeze_targets = []
        if protected:
            freeze_task = TaskDefinition.objects.get(organisation=None, code="preheater_freeze")
            freeze_targets = task_targets(task=freeze_task, ahu=ahu, components=ahu.components.all())
            freeze_visits = freeze_test_visits(site=site, today=today, months=months)
        loading = {b.pk: rng.uniform(0.0, 0.3) for b in banks}
        rate = {b.pk: rng.uniform(0.00015, 0.00030) for b in banks}  # fraction of span per run-hour
        hours = 5_000.0 + 1_000 * unit_no
        change_due = set()
        for m in range(months, 0, -1):
            due = today - dt.timedelta(days=VISIT_DAYS * m)
            hours += HOURS_PER_DAY * VISIT_DAYS * rng.uniform(0.9, 1.1)
            reduced = m == REDUCED_AIRFLOW_MONTHS_AGO
            codes = ["filter_check"] if reduced else ["filter_check", "ventilation_check"]
            if m % 3 == 0:
                codes += ["controls_check", "damper_actuator"]
            if m % 6 == 0 and (sensors or temp_sensors or any(other_sensors.values())):
                codes.append("sensor_calibration")
            if change_due:
                codes.append("filter_replace")
            if due in freeze_visits:
                codes.append("preheater_freeze")
            wo = _work_order(
                ahu=ahu,
                organisation=organisation,
                technician=tech,
                due=due,
                codes=codes,
                targets={
                    "filter_replace": [b for b in banks if b.pk in change_due],
                    "preheater_freeze": freeze_targets or [None],
                },
                keys={"preheater_freeze": freeze_visits[due]} if due in freeze_visits else None,
            )
            finished = dt.datetime.combine(due, dt.time(9, 30), tzinfo=dt.UTC) + dt.timedelta(minutes=7 * unit_no)
            readings = [{"item": "visit.run_hours", "component": None, "value": round(hours)}]
            airflow = ahu.design_supply_airflow_m3s * (REDUCED_AIRFLOW_SHARE if reduced else 1.0)
            # A 100 % outdoor-air unit's ventilation check judges the outdoor air it delivers: its supply airflow.
            if reduced or ahu.full_outdoor_air:
                readings.append(
                    {
                        "item": "visit.supply_airflow",
                        "component": None,
                        "value": round(eng_units.to_display(value=airflow, quantity="airflow", system="si")),
                        "note": "unit at part load: supply airflow read from the flow station" if reduced else "",
                    }
                )
            for b in banks:
                clean, final = b.specs["clean_dp_pa"], b.specs["final_dp_pa"]
                # The filter check reads the filters as found: at a changing visit, the loaded ones about to
                # come out (the evidence for the change); the reading after the change is the new set's first.
                loading[b.pk] += rate[b.pk] * HOURS_PER_DAY * VISIT_DAYS
                dp = (clean + loading[b.pk] * (final - clean) + rng.uniform(-3, 3)) * part_load(b, ahu, airflow)
                readings += [
                    {
                        "item": "filter_check.dp",
                        "component": b.label_code,
                        "value": round(max(dp, 1)),
                        "note": "loaded: change raised" if loading[b.pk] > 0.9 else "",
                    },
                    {"item": "filter_check.seated", "component": b.label_code, "value": "ok"},
                    {
                        "item": "filter_check.media",
                        "component": b.label_code,
                        "value": "clean" if loading[b.pk] < 0.2 else "loaded",
                    },
                ]
                if b.pk in change_due:
                    loading[b.pk] = 0.0
                    after = round(clean * rng.uniform(0.98, 1.08) * part_load(b, ahu, airflow))
                    readings += [
                        {"item": "filter_replace.replaced", "component": b.label_code, "value": "ok"},
                        {"item": "filter_replace.dp_after", "component": b.label_code, "value": after},
                    ]
            change_due = {b.pk for b in banks if loading[b.pk] > 0.85}
            t_out = outdoor_c(site, due, rng)
            design_short = design_short_of_requirement(ahu)
            t_ret = round(22 + rng.uniform(-1, 1), 1)
            x = max(ahu.design_min_oa_fraction, 0.1) + rng.uniform(0.02, 0.08)
            vent = [{"item": "ventilation_check.outdoor_air", "component": None, "value": t_out}]
            if not ahu.full_outdoor_air:  # a 100 % outdoor-air unit has no return or mixed air to read
                vent += [
                    {"item": "ventilation_check.return_air", "component": None, "value": t_ret},
                    {
                        "item": "ventilation_check.mixed_air",
                        "component": None,
                        "value": round(t_ret - x * (t_ret - t_out) + rng.uniform(-0.2, 0.2), 1),
                        "note": SHORT_DESIGN_NOTE if design_short else "",
                    },
                ]
            if not reduced:  # drawn all the same, so the rest of the history stays as it was
                readings += vent
            faulty = unit_no == 0 and m <= max(months // 3, 1)
            if "controls_check" in codes:
                sp = ahu.supply_air_setpoint_c or 17.0
                readings += [
                    {
                        "item": "controls_check.supply_air",
                        "component": None,
                        "value": round(sp + rng.uniform(-0.6, 0.6), 1),
                    },
                    {"item": "controls_check.supply_setpoint", "component": None, "value": sp},
                    {"item": "controls_check.alarms", "component": None, "value": "ok"},
                    {"item": "controls_check.schedule", "component": None, "value": "ok"},
                ]
                for d in dampers:
                    cmd = 40
                    pos = cmd - (14 if faulty and d.specs.get("role") == "outdoor" else rng.randint(-2, 2))
                    readings += [
                        {"item": "damper_actuator.command", "component": d.label_code, "value": cmd},
                        {
                            "item": "damper_actuator.position",
                            "component": d.label_code,
                            "value": pos,
                            "note": "actuator slipping on the shaft" if cmd - pos > 10 else "",
                        },
                        {"item": "damper_actuator.linkage", "component": d.label_code, "value": "ok"},
                    ]
            if "preheater_freeze" in codes:
                # The unit's latest test fails where the demo says so: stage 1 came on far too late.
                late = FREEZE_FAULTS.get((site.code, ahu.tag)) == "stage_late" and due == max(freeze_visits)
                for heater in preheaters:
                    switch_on = heater.specs.get("switch_on_c", site.preheat_threshold_c)
                    readings += [
                        {
                            "item": "preheater_freeze.stage_on_temp",
                            "component": heater.label_code,
                            "value": round(switch_on - 4.5 if late else switch_on + rng.uniform(-0.5, 0.5), 1),
                            "note": "stage 1 came on only well below its set point: controller offset suspected"
                            if late
                            else "",
                        },
                        {"item": "preheater_freeze.stages", "component": heater.label_code, "value": "ok"},
                        {"item": "preheater_freeze.airflow_interlock", "component": heater.label_code, "value": "ok"},
                        {"item": "preheater_freeze.primary_limit", "component": heater.label_code, "value": "ok"},
                        {"item": "preheater_freeze.high_limit", "component": heater.label_code, "value": "ok"},
                        {"item": "preheater_freeze.set_points_restored", "component": heater.label_code, "value": "ok"},
                    ]
                readings += preheat_coil_readings(ahu)
                readings += [
                    {
                        "item": "preheater_freeze.freeze_trip_temp",
                        "component": None,
                        "value": round(rng.uniform(4, 5.5), 1),
                    },
                    {"item": "preheater_freeze.freeze_trip_test", "component": None, "value": "ok"},
                ]
            if "sensor_calibration" in codes:
                for s in sensors:
                    ref = round(rng.uniform(650, 900))
                    drift = 120 if faulty else rng.randint(-20, 20)
                    readings += [
                        {"item": "sensor_calibration.co2_sensor", "component": s.label_code, "value": ref + drift},
                        {
                            "item": "sensor_calibration.co2_reference",
                            "component": s.label_code,
                            "value": ref,
                            "note": "reads high against the reference" if drift > 50 else "",
                        },
                    ]
                for s in temp_sensors:
                    ref = round(rng.uniform(15, 19), 1)
                    readings += [
                        {
                            "item": "sensor_calibration.temp_sensor",
                            "component": s.label_code,
                            "value": round(ref + rng.uniform(-0.2, 0.2), 1),
                        },
                        {"item": "sensor_calibration.temp_reference", "component": s.label_code, "value": ref},
                    ]
            if "sensor_calibration" in codes:
                for s in other_sensors["pressure"]:
                    ref = round(rng.uniform(220, 280))
                    readings += [
                        {"item": "sensor_calibration.pressure_sensor", "component": s.label_code,
                         "value": ref + rng.randint(-5, 5)},
                        {"item": "sensor_calibration.pressure_reference", "component": s.label_code, "value": ref},
                    ]  # fmt: skip
                for s in other_sensors["humidity"]:
                    ref = round(rng.uniform(35, 55))
                    readings += [
                        {"item": "sensor_calibration.rh_sensor", "component": s.label_code,
                         "value": ref + rng.randint(-2, 2)},
                        {"item": "sensor_calibration.rh_reference", "component": s.label_code, "value": ref},
                    ]  # fmt: skip
            form = {
                "client_uuid": str(uuid.uuid5(NAMESPACE, f"{organisation.pk}:{ahu.pk}:{due.isoformat()}")),
                "work_order": str(wo.public_id),
                "work_order_version": wo.version,
                "unit_system": "si",
                "started_at": (finished - dt.timedelta(minutes=50)).isoformat(),
                "finished_at": finished.isoformat(),
                "readings": readings,
                "photos": [],
                "signature": {"name": str(tech), "image": sig, "signed_at": finished.isoformat()},
            }
            result = inspection_submit(user=tech, form=form)
            if result["status"] == "refused":
                raise ValueError(f"demo form for {ahu.tag} {due} refused: {result['errors']}")
            if result["status"] != "duplicate":
                # The demo's phone synced as the technician left the plant room, not on the day the demo loaded.
                _received_after(inspection_id=result["inspection_id"], finished=finished)
            if result["status"] != "duplicate":
                counts["work_orders"] += 1
                counts["inspections"] += 1
                counts["findings"] += len(result["findings"])
    return counts


def preheat_coil_readings(ahu: AHU) -> list[dict]:
    """A freeze-protection test's steps of the unit's preheat coils, passing: valve fails open, pump runs, and a
    glycol coil's freezing point read 0.4 K warmer than its design concentration's (no draw from the demo's random
    sequence, so the rest of its history stays as it was)."""
    out: list[dict] = []
    for coil in ahu.components.filter(kind="coil", specs__duty="preheat").order_by("position", "id"):
        code = coil.label_code
        out += [
            {"item": "preheater_freeze.coil_valve_fail_open", "component": code, "value": "ok"},
            {"item": "preheater_freeze.coil_pump_runs", "component": code, "value": "ok"},
        ]
        specs = coil.specs or {}
        if specs.get("fluid") == "glycol" and specs.get("glycol_kind") and specs.get("glycol_pct"):
            design = glycol_freeze_point_c(kind=specs["glycol_kind"], mass_pct=float(specs["glycol_pct"]))
            value = round(design + 0.4, 1)
            out.append({"item": "preheater_freeze.glycol_freeze_point", "component": code, "value": value})
    return out
