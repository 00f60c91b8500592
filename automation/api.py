"""REST API of the point map, trend upload and Brick models.

Reads go through ``automation.selectors`` (the tenancy rule): a point or site the person may not see does not
exist for them (404). Writes need a supervisor or admin of the site's organisation, otherwise 403. Errors come
in the one shape of ``config/api.py``; an import refused lists every problem.
"""

from django.core.exceptions import PermissionDenied
from django.http import Http404, HttpResponse
from drf_spectacular.utils import OpenApiParameter, OpenApiResponse, extend_schema
from rest_framework import serializers, status
from rest_framework.pagination import LimitOffsetPagination
from rest_framework.parsers import FormParser, MultiPartParser
from rest_framework.response import Response
from rest_framework.views import APIView

from accounts.api_errors import RowErrorsOutput
from inventory.api_answers import R400, R401, R403, R404, page_output
from inventory.api_requests import managed_organisation
from inventory.csv_io import ImportFailed, decode_upload
from inventory.selectors import ahus_visible_to, sites_managed_by

from . import selectors, services, trends
from .brick import BrickImportFailed, site_brick_turtle
from .brick_import import site_brick_import
from .models import Point
from .serializers import (
    BrickImportInput,
    BrickImportOutput,
    BrickProblemsOutput,
    PointChangeInput,
    PointInput,
    PointOutput,
    TrendImportJobOutput,
    TrendResultOutput,
    TrendUploadInput,
)

ROWS_400 = OpenApiResponse(RowErrorsOutput, description="Every bad row or cell: line, column, value, reason.")


def _id_param(request, name: str) -> int | None:
    raw = request.query_params.get(name)
    if raw in (None, ""):
        return None
    if not raw.isdigit() or len(raw) > 18:
        raise serializers.ValidationError({name: [f"{name}={raw!r} is not an id; allowed: a whole number"]})
    return int(raw)


class PointListView(APIView):
    @extend_schema(
        summary="The automation points of the units you may see",
        parameters=[
            OpenApiParameter("site", int, description="only this site's points"),
            OpenApiParameter("ahu", int, description="only this unit's points"),
        ],
        operation_id="automation_points_list",
        responses={200: page_output(PointOutput), 400: R400, 401: R401},
    )
    def get(self, request):
        points = selectors.points_visible_to(user=request.user, ahu_id=_id_param(request, "ahu"))
        site_id = _id_param(request, "site")
        if site_id is not None:
            points = points.filter(ahu__building__site_id=site_id)
        paginator = LimitOffsetPagination()
        page = paginator.paginate_queryset(points, request, view=self)
        return paginator.get_paginated_response(PointOutput(page, many=True).data)

    @extend_schema(
        summary="Map an automation point to a unit (and one of its parts)",
        request=PointInput,
        responses={201: PointOutput, 400: R400, 403: R403, 404: R404},
    )
    def post(self, request):
        data = PointInput(data=request.data)
        data.is_valid(raise_exception=True)
        values = dict(data.validated_data)
        ahu = ahus_visible_to(user=request.user).filter(pk=values.pop("ahu")).first()
        if ahu is None:
            raise Http404("ahu: no such unit, or not one you may see.")
        if not sites_managed_by(user=request.user).filter(pk=ahu.building.site_id).exists():
            raise PermissionDenied("Only a supervisor or admin of the unit's organisation may map its points.")
        point = services.point_create(ahu=ahu, by=request.user, **values)
        return Response(PointOutput(point).data, status=status.HTTP_201_CREATED)


class PointDetailView(APIView):
    @extend_schema(summary="One point", responses={200: PointOutput, 404: R404})
    def get(self, request, pk: int):
        return Response(PointOutput(selectors.point_for(user=request.user, id=pk)).data)

    @extend_schema(
        summary="Change a point's name, class, unit, part or BACnet address",
        request=PointChangeInput,
        responses={200: PointOutput, 400: R400, 403: R403, 404: R404},
    )
    def patch(self, request, pk: int):
        point = selectors.point_for(user=request.user, id=pk, write=True)
        data = PointChangeInput(data=request.data)
        data.is_valid(raise_exception=True)
        point = services.point_update(point=point, by=request.user, **data.validated_data)
        return Response(PointOutput(Point.objects.select_related("ahu__building", "component").get(pk=point.pk)).data)

    @extend_schema(summary="Remove a point and its trend", responses={204: None, 403: R403, 404: R404})
    def delete(self, request, pk: int):
        services.point_delete(point=selectors.point_for(user=request.user, id=pk, write=True), by=request.user)
        return Response(status=status.HTTP_204_NO_CONTENT)


class TrendUploadView(APIView):
    parser_classes = [MultiPartParser, FormParser]

    @extend_schema(
        summary="Import a trend log (CSV) for a site's points: every value or none",
        description=(
            "Layouts: `wide` (first column the time, then a column per point name) or `long` (columns timestamp, "
            "point, value). Times without a zone are the site's. A point name two units share is written "
            "`<unit label code>/<point name>`. `units` states the units of the file's values (`si`: °C, Pa, m³/s; "
            "`us`: °F, in. w.c., cfm); they are converted to SI by each point's class."
        ),
        request={"multipart/form-data": TrendUploadInput},
        responses={
            200: TrendResultOutput,
            202: OpenApiResponse(TrendImportJobOutput, description="Queued as a background job."),
            400: ROWS_400,
            403: R403,
            404: R404,
        },
    )
    def post(self, request, pk: int):
        site = selectors.site_for(user=request.user, id=pk, write=True)
        data = TrendUploadInput(data=request.data)
        data.is_valid(raise_exception=True)
        upload = data.validated_data["file"]
        layout = data.validated_data["layout"]
        units = data.validated_data["units"]
        try:
            text = decode_upload(upload.read()).read()
            background = data.validated_data.get("background")
            if background is None:
                background = trends.trend_import_runs_in_background(text=text)
            if background:
                job = trends.trend_import_job_create(
                    site=site, text=text, layout=layout, units=units, by=request.user, file_name=upload.name or ""
                )
                return Response(TrendImportJobOutput(job).data, status=status.HTTP_202_ACCEPTED)
            result = trends.trend_import(site=site, text=text, layout=layout, units=units, by=request.user)
        except ImportFailed as exc:
            body = {"detail": str(exc), "errors": [e.as_dict() for e in exc.errors]}
            return Response(body, status=status.HTTP_400_BAD_REQUEST)
        return Response(TrendResultOutput(result.as_dict()).data)


class TrendImportJobView(APIView):
    @extend_schema(
        summary="A background trend import: status and every bad row", responses={200: TrendImportJobOutput, 404: R404}
    )
    def get(self, request, public_id):
        return Response(
            TrendImportJobOutput(selectors.trend_import_job_for(user=request.user, public_id=public_id)).data
        )


class BrickExportView(APIView):
    @extend_schema(
        summary="The site's registry and point map as a Brick model (Turtle)",
        responses={(200, "text/turtle"): OpenApiResponse(str), 404: R404},
    )
    def get(self, request, pk: int):
        site = selectors.site_for(user=request.user, id=pk)
        response = HttpResponse(site_brick_turtle(site=site), content_type="text/turtle; charset=utf-8")
        response["Content-Disposition"] = f'attachment; filename="plenum-{site.code}.ttl"'
        return response


class BrickImportView(APIView):
    parser_classes = [MultiPartParser, FormParser]

    @extend_schema(
        summary="Create a site with its buildings, units, parts and points from a Brick model: all or nothing",
        description="The model is checked by the Brick ontology's SHACL shapes, then every record like the API's.",
        request={"multipart/form-data": BrickImportInput},
        responses={
            201: BrickImportOutput,
            400: OpenApiResponse(BrickProblemsOutput, description="Every problem: thing, field, value, reason."),
            403: R403,
        },
    )
    def post(self, request):
        data = BrickImportInput(data=request.data)
        data.is_valid(raise_exception=True)
        organisation = managed_organisation(user=request.user, slug=data.validated_data.get("organisation"))
        raw = data.validated_data["file"].read()
        try:
            text = raw.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            raise serializers.ValidationError(
                {"file": [f"the file is not UTF-8 text ({exc.reason} at byte {exc.start})"]}
            ) from None
        try:
            site = site_brick_import(organisation=organisation, text=text, by=request.user)
        except BrickImportFailed as exc:
            body = {"detail": str(exc), "errors": [p.as_dict() for p in exc.problems]}
            return Response(body, status=status.HTTP_400_BAD_REQUEST)
        out = {
            "pk": site.pk,
            "code": site.code,
            "name": site.name,
            "points": Point.objects.filter(ahu__building__site=site).count(),
        }
        return Response(BrickImportOutput(out).data, status=status.HTTP_201_CREATED)
