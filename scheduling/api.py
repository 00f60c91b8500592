"""Scheduling API: one small view per operation; tenancy through the selectors. What a view reads from the request
(the caller's organisation, the work order named, the polled reads' parameters) is ``scheduling.api_requests``; what
it answers beyond a serializer (the work order now, the over-capacity warning) ``scheduling.api_answers``."""

from __future__ import annotations

import datetime as dt

from django.conf import settings
from django.core.exceptions import ValidationError
from django.urls import reverse
from django.utils import timezone
from django.utils.decorators import method_decorator
from django.views.decorators.http import conditional_page
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework import status
from rest_framework.exceptions import PermissionDenied
from rest_framework.response import Response
from rest_framework.views import APIView

from accounts.answers import json_answer
from accounts.api_errors import ErrorOutput
from accounts.inputs import FieldErrors, check_reading_time
from accounts.selectors import does_field_work, technician_of
from inventory.selectors import ahus_visible_to, sites_visible_to
from inventory.today import today_for

from . import serializers as s
from .api_answers import assignment_warnings_answer, board_answer, revalidated, work_order_answer
from .api_requests import (
    BOARD,
    CONDITIONAL,
    TODAY,
    board_params,
    caller_organisation,
    kept_zone,
    today_params,
    work_order_managed,
    work_order_seen,
)
from .due_basis import due_bases
from .models import MeterReading, OutdoorTemperature, WorkOrder
from .selectors import (
    BOARD_LIMIT_MAX,
    BOARD_SECTIONS,
    effective_tasks,
    today_visits_for,
    work_orders_managed_by,
    work_orders_visible_to,
)
from .services import (
    AssignmentWarnings,
    WorkOrderConflict,
    calendar_feed_issue,
    corrective_work_order_approve,
    corrective_work_order_reject,
    meter_reading_record,
    task_definition_override,
    work_order_assign_and_plan,
    work_order_schedule,
    work_order_transition,
)
from .services.work_orders import no_technician

ERRORS = {400: ErrorOutput, 403: ErrorOutput, 404: ErrorOutput}
SELF_SERVICE_STATES = {WorkOrder.State.IN_PROGRESS, WorkOrder.State.COMPLETED}


class WorkOrderChangeView(APIView):
    """A view that changes a work order: a stale version answers 409 with the current one.

    DRF's own exception hook, so each view just calls its service.
    """

    def handle_exception(self, exc):
        if isinstance(exc, WorkOrderConflict):
            return Response(
                {"detail": str(exc), "current_version": exc.current_version}, status=status.HTTP_409_CONFLICT
            )
        return super().handle_exception(exc)


class WorkOrderList(APIView):
    @extend_schema(
        responses={200: s.WorkOrderOutput(many=True), 400: ErrorOutput},
        parameters=[OpenApiParameter("state", str), OpenApiParameter("site", str, description="site code")],
        summary="Work orders the caller may see",
    )
    def get(self, request):
        qs = work_orders_visible_to(user=request.user)
        if request.query_params.get("state"):
            qs = qs.filter(state=request.query_params["state"])
        if request.query_params.get("site"):
            qs = qs.filter(ahu__building__site__code=request.query_params["site"])
        orders = list(qs.order_by("due_date", "id")[:500])
        bases = due_bases(work_order_ids=[o.pk for o in orders], today=today_for(request.user))
        return Response(s.WorkOrderOutput(orders, many=True, context={"due_bases": bases}).data)


class WorkOrderDetail(APIView):
    @extend_schema(responses={200: s.WorkOrderOutput, **ERRORS}, summary="One work order with its tasks")
    def get(self, request, public_id):
        return work_order_answer(request, public_id)


class WorkOrderAssign(WorkOrderChangeView):
    @extend_schema(
        request=s.AssignInput,
        responses={200: s.WorkOrderOutput, 409: s.AssignmentWarningOutput, **ERRORS},
        summary="Assign or reassign to a technician",
        description=(
            "A stale version is a 409 with current_version. So, unless confirm_warnings is true, is an assignment "
            "that warns: the technician's day (tasks plus travel between the day's sites) past their capacity, a "
            "skill the work's tasks need that the technician lacks, or a day after the work's due date (urgent "
            "work late, or work that will show overdue). Nothing is saved; the answer says each warning (naming "
            "the technician, the skill, the day and the due date), the day's hours and the least-loaded qualified "
            "technician. Send the same request with confirm_warnings: true to assign anyway."
        ),
    )
    def post(self, request, public_id):
        wo = work_order_managed(request, public_id, action="assign")
        data = s.AssignInput(data=request.data)
        data.is_valid(raise_exception=True)
        assignee = technician_of(organisation_id=wo.organisation_id, username=data.validated_data["assignee"])
        if assignee is None:
            raise ValidationError({"assignee": [no_technician(data.validated_data["assignee"])]})
        try:
            work_order_assign_and_plan(
                work_order=wo,
                assignee=assignee,
                by=request.user,
                expected_version=data.validated_data["version"],
                plan="scheduled_for" in data.validated_data,
                day=data.validated_data.get("scheduled_for"),
                confirm=data.validated_data["confirm_warnings"] or data.validated_data["confirm_over_capacity"],
            )
        except AssignmentWarnings as warning:
            return assignment_warnings_answer(warning.check)
        return work_order_answer(request, public_id)


class WorkOrderSchedule(WorkOrderChangeView):
    @extend_schema(
        request=s.ScheduleInput,
        responses={200: s.WorkOrderOutput, 409: s.ConflictOutput, **ERRORS},
        summary="Plan a work order for a day (or clear the plan)",
        description=(
            "Open work only; the day is the site's local date and may not be in the past (400 naming "
            "scheduled_for). A stale version is a 409."
        ),
    )
    def post(self, request, public_id):
        wo = work_order_managed(request, public_id, action="plan work")
        data = s.ScheduleInput(data=request.data)
        data.is_valid(raise_exception=True)
        work_order_schedule(
            work_order=wo,
            day=data.validated_data["scheduled_for"],
            by=request.user,
            expected_version=data.validated_data["version"],
        )
        return work_order_answer(request, public_id)


class WorkOrderTransition(WorkOrderChangeView):
    @extend_schema(
        request=s.TransitionInput,
        responses={200: s.WorkOrderOutput, 409: s.ConflictOutput, **ERRORS},
        summary="Move a work order to another state (start, complete, verify, cancel, unassign)",
    )
    def post(self, request, public_id):
        wo = work_order_seen(request, public_id)
        data = s.TransitionInput(data=request.data)
        data.is_valid(raise_exception=True)
        to_state = data.validated_data["to_state"]
        managed = work_orders_managed_by(user=request.user).filter(pk=wo.pk).exists()
        own = wo.assignee_id == request.user.pk and to_state in SELF_SERVICE_STATES
        if not (managed or own):
            raise PermissionDenied(
                f"You may not move this work order to {to_state.replace('_', ' ')}: a technician starts and "
                "completes their own work; anything else is for a supervisor or admin of the organisation."
            )
        work_order_transition(
            work_order=wo,
            to_state=to_state,
            by=request.user,
            expected_version=data.validated_data["version"],
            reason=data.validated_data["reason"],
        )
        return work_order_answer(request, public_id)


class WorkOrderApprove(WorkOrderChangeView):
    @extend_schema(
        request=s.VersionInput,
        responses={200: s.WorkOrderOutput, 409: s.ConflictOutput, **ERRORS},
        summary="Approve proposed corrective work",
    )
    def post(self, request, public_id):
        wo = work_order_managed(request, public_id, action="approve")
        data = s.VersionInput(data=request.data)
        data.is_valid(raise_exception=True)
        corrective_work_order_approve(work_order=wo, by=request.user, expected_version=data.validated_data["version"])
        return work_order_answer(request, public_id)


class WorkOrderReject(WorkOrderChangeView):
    @extend_schema(
        request=s.RejectInput,
        responses={200: s.WorkOrderOutput, 409: s.ConflictOutput, **ERRORS},
        summary="Reject proposed corrective work, with a reason",
    )
    def post(self, request, public_id):
        wo = work_order_managed(request, public_id, action="reject")
        data = s.RejectInput(data=request.data)
        data.is_valid(raise_exception=True)
        corrective_work_order_reject(
            work_order=wo,
            by=request.user,
            reason=data.validated_data["reason"],
            expected_version=data.validated_data["version"],
        )
        return work_order_answer(request, public_id)


# Both polled reads are whole answers from accounts.answers: built once per change of what they depend on
# (accounts.changes: today, the organisation's setup and the technician's own work; the board, the organisation's
# setup and all its work), then served from the worker's memory (a token client's repeat costs one query,
# before DRF is entered).
# The ETag is a hash of the answer's bytes, so it is right whatever changed (a work order, a site's name, a
# task's estimate).


@method_decorator(conditional_page, name="dispatch")
class TodayVisits(APIView):
    @extend_schema(
        responses={200: s.VisitOutput(many=True), 304: None, **ERRORS},
        parameters=[
            OpenApiParameter("day", dt.date, description="default: today where the caller's sites are"),
            OpenApiParameter("lat", float),
            OpenApiParameter("lon", float),
            *CONDITIONAL,
        ],
        summary="The caller's visits for the day, in a suggested order",
    )
    def get(self, request):
        day, start = key = today_params(request, request.user)

        def build():
            today = today_for(kept_zone(request, request.user))  # the caller's today: their visits in progress
            return today_visits_for(technician=request.user, day=day, start=start, today=today)

        answer = json_answer(request, polled=TODAY, key=key, build=build)
        return revalidated(answer or Response(build()))


@method_decorator(conditional_page, name="dispatch")
class Board(APIView):
    @extend_schema(
        responses={200: s.BoardOutput, 304: None, **ERRORS},
        parameters=[
            OpenApiParameter("week", dt.date, description="any day of the week; default: this week"),
            OpenApiParameter(
                "limit", int, description=f"rows per section, 0 to {BOARD_LIMIT_MAX} (default 100); counts are for all"
            ),
            OpenApiParameter("offset", int, description="rows of each section to skip (default 0)"),
            OpenApiParameter(
                "section", str, enum=list(BOARD_SECTIONS), description="only this section's rows (counts stay whole)"
            ),
            *CONDITIONAL,
        ],
        summary="Supervisor's board: due, overdue and assigned for a week, a page per section with whole counts",
    )
    def get(self, request):
        week, today, limit, offset, section = key = board_params(request, request.user)

        def build():
            org = caller_organisation(request.user, managing=True)
            if org is None:
                raise PermissionDenied("the board is for supervisors")
            return board_answer(organisation=org, week=week, today=today, limit=limit, offset=offset, section=section)

        answer = json_answer(request, polled=BOARD, key=key, build=build)
        return revalidated(answer or Response(build()))


class TaskList(APIView):
    @extend_schema(responses={200: s.TaskDefinitionOutput(many=True)}, summary="Maintenance rules in force")
    def get(self, request):
        org = caller_organisation(request.user)
        if org is None:
            return Response([])
        tasks = sorted(
            effective_tasks(organisation=org, include_disabled=True).values(), key=lambda t: (t.category, t.code)
        )
        return Response(s.TaskDefinitionOutput(tasks, many=True).data)


class TaskOverride(APIView):
    @extend_schema(
        request=s.TaskOverrideInput,
        responses={200: s.TaskDefinitionOutput, **ERRORS},
        summary="Change a rule for the caller's organisation",
    )
    def patch(self, request, code):
        org = caller_organisation(request.user, managing=True)
        if org is None:
            raise PermissionDenied("Only a supervisor or admin of the organisation may change the maintenance rules.")
        data = s.TaskOverrideInput(data=request.data)
        data.is_valid(raise_exception=True)
        task = task_definition_override(organisation=org, code=code, by=request.user, **data.validated_data)
        return Response(s.TaskDefinitionOutput(task).data)


class MeterReadings(APIView):
    @extend_schema(
        responses={200: s.MeterReadingOutput(many=True), 400: ErrorOutput},  # 400: a control character in the address
        parameters=[OpenApiParameter("unit", str)],
        summary="Run-hour readings of a unit",
    )
    def get(self, request):
        ahu = ahus_visible_to(user=request.user).filter(label_code=request.query_params.get("unit", "")).first()
        if ahu is None:
            return Response([])
        rows = MeterReading.objects.filter(ahu=ahu).select_related("ahu").order_by("-taken_at")[:200]
        return Response(s.MeterReadingOutput(rows, many=True).data)

    @extend_schema(
        request=s.MeterReadingInput, responses={201: s.MeterReadingOutput, **ERRORS}, summary="Push a run-hour reading"
    )
    def post(self, request):
        data = s.MeterReadingInput(data=request.data)
        data.is_valid(raise_exception=True)
        v = data.validated_data
        ahu = ahus_visible_to(user=request.user).filter(label_code=v["unit_label"].upper()).first()
        if ahu is None:
            raise ValidationError({"unit_label": [f"unit_label={v['unit_label']!r} is not a unit you can see"]})
        if not does_field_work(user=request.user, organisation_id=ahu.building.site.organisation_id):
            # A reading moves the run-hour schedule and refuses any later lower one: only people who read meters.
            raise PermissionDenied(
                "Only a technician, supervisor or admin of the organisation may record run-hour readings; "
                "property managers read them."
            )
        component = None
        if v["component_label"]:
            component = ahu.components.filter(label_code=v["component_label"].upper()).first()
            if component is None:
                raise ValidationError({"component_label": [f"{v['component_label']!r} is not a part of {ahu.tag}"]})
        checked = FieldErrors()
        taken_at = check_reading_time(
            v["taken_at"], key="taken_at", label="Reading time", tz=ahu.building.site.time_zone,
            now=timezone.now(), errors=checked,
        )  # fmt: skip
        checked.raise_if_any()
        reading = meter_reading_record(
            ahu=ahu,
            hours=v["hours"],
            taken_at=taken_at,
            component=component,
            is_reset=v["is_reset"],
            source=MeterReading.Source.API,
            by=request.user,
        )
        return Response(s.MeterReadingOutput(reading).data, status=201)


class OutdoorTemperatures(APIView):
    @extend_schema(
        responses={200: s.OutdoorTemperatureOutput(many=True), 400: ErrorOutput},  # 400: a control character
        parameters=[OpenApiParameter("site", str)],
        summary="Stored outdoor temperatures of a site",
    )
    def get(self, request):
        site = sites_visible_to(user=request.user).filter(code=request.query_params.get("site", "")).first()
        if site is None:
            return Response([])
        rows = OutdoorTemperature.objects.filter(site=site).order_by("-date")[:400]
        return Response(s.OutdoorTemperatureOutput(rows, many=True).data)


class CalendarFeedIssue(APIView):
    @extend_schema(
        request=None,
        responses={201: s.CalendarFeedOutput},
        summary="A new secret calendar URL for the caller's assigned visits (revokes the old one)",
    )
    def post(self, request):
        feed = calendar_feed_issue(user=request.user)
        url = settings.PLENUM_PUBLIC_URL.rstrip("/") + reverse("scheduling:calendar", kwargs={"token": feed.token})
        return Response({"url": url}, status=201)
