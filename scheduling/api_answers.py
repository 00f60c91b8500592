"""What the scheduling API's views answer beyond a serializer: the work order as it now stands (every work-order
route's answer), the board's answer, the 409 that warns before an assignment is saved (capacity, skills, due
date), and the polled reads' caching headers."""

from __future__ import annotations

import datetime as dt

from django.utils.cache import patch_cache_control, patch_vary_headers
from rest_framework import status
from rest_framework.response import Response

from . import serializers as s
from .api_requests import work_order_seen
from .selectors import board_load_rows, board_page_for, board_suggestions, overdue_awaiting_rows, to_verify_rows


def work_order_answer(request, public_id) -> Response:
    """The work order as it now stands, read again through the access function (a change moves its version,
    state and tasks): the answer of every work-order route."""
    return Response(s.WorkOrderOutput(work_order_seen(request, public_id)).data)


def assignment_warnings_answer(check) -> Response:
    """The 409 that warns before an assignment passes the technician's capacity (tasks plus travel), gives the
    work to someone without a skill it needs, or plans it after its due date, as the board page does
    (``work_order_assign_and_plan`` decides when)."""
    suggestion = None
    if check.suggestion is not None:
        user, load = check.suggestion
        suggestion = {"id": user.pk, "username": user.username, "name": str(user), "load": load.as_dict()}
    said = check.warnings()
    message = f"{' '.join(said)} {check.suggestion_words()}"
    body = {
        "detail": message,
        "errors": {"confirm_warnings": [f"{message} Send confirm_warnings: true to assign anyway."]},
        "warnings": [{"code": code, "message": text} for code, text in zip(check.codes(), said, strict=True)],
        "load": s.DayLoadOutput(check.load.as_dict()).data,
        "suggestion": suggestion,
    }
    return Response(body, status=status.HTTP_409_CONFLICT)


def board_answer(*, organisation, week: dt.date, today: dt.date, limit: int, offset: int, section: str | None) -> dict:
    """The board API's answer (``BoardOutput``): a page of each section with the suggested technician of each
    unassigned row, the technicians' week, the work to verify and the overdue work awaiting approval, each from the
    function the board page reads it with."""
    page = board_page_for(
        organisation=organisation, week_start=week, today=today, limit=limit, offset=offset, section=section
    )
    board_suggestions(organisation=organisation, rows=[*page["overdue"], *page["due"], *page["assigned"]])
    return {
        **page,
        "load": board_load_rows(organisation=organisation, start=week, days=7),
        "to_verify": to_verify_rows(organisation=organisation),
        "overdue_awaiting": overdue_awaiting_rows(organisation=organisation),
    }


def revalidated(response: Response) -> Response:
    """Polled reads: kept only by the caller, and checked each time (the ETag makes an unchanged answer a 304)."""
    patch_cache_control(response, private=True, no_cache=True)
    patch_vary_headers(response, ["Authorization"])
    return response
