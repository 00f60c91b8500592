"""API views of the inspections app: thin, one operation each; contract in inspections/SYNC.md."""

from django.conf import settings
from django.core.exceptions import PermissionDenied, RequestDataTooBig, ValidationError
from django.http import FileResponse
from django.urls import reverse
from django.utils import timezone
from drf_spectacular.utils import OpenApiParameter, OpenApiResponse, extend_schema
from rest_framework import status
from rest_framework.parsers import BaseParser, FormParser, MultiPartParser
from rest_framework.response import Response
from rest_framework.views import APIView

from accounts.api_errors import ErrorOutput
from accounts.inputs import INT64_MAX, FieldErrors, check_integer
from scheduling.selectors import work_order_for

from . import check, freeze, selectors, services
from . import serializers as s
from .models import Inspection

NOT_FOUND = OpenApiResponse(ErrorOutput, description="Not found or not visible to you.")
BAD = OpenApiResponse(ErrorOutput, description="Bad input; errors name the field.")
READ_ONLY = OpenApiResponse(ErrorOutput, description="You may read this work but not add to it.")


class ChecklistView(APIView):
    @extend_schema(responses={200: s.ChecklistOutput, 404: NOT_FOUND}, tags=["inspections"])
    def get(self, request, public_id):
        wo = work_order_for(user=request.user, public_id=public_id)
        return Response(selectors.checklist_for(work_order=wo, user=request.user))


class CheckedJSONParser(BaseParser):
    """JSON read with a size cap and a depth limit (``check.body_parse``): a hostile body is a 4xx, never a 500."""

    media_type = "application/json"

    def parse(self, stream, media_type=None, parser_context=None):
        limit = settings.DATA_UPLOAD_MAX_MEMORY_SIZE
        data = stream.read(limit + 1) if stream is not None else b""
        if len(data) > limit:
            raise RequestDataTooBig("the body is larger than DATA_UPLOAD_MAX_MEMORY_SIZE")  # config.errors: 413
        return check.body_parse(data)


class SyncView(APIView):
    parser_classes = [CheckedJSONParser]

    @extend_schema(
        request=s.SyncInput,
        responses={200: s.SyncOutput, 400: BAD, 403: READ_ONLY},
        tags=["inspections"],
        description="Store finished forms once each; see inspections/SYNC.md.",
    )
    def post(self, request):
        if not selectors.does_field_work_anywhere(user=request.user):
            raise PermissionDenied("Property managers read inspections; only the people who do the work send forms.")
        data = s.SyncInput(data=request.data)
        data.is_valid(raise_exception=True)
        results = services.inspection_sync(
            user=request.user, forms=data.validated_data["forms"], sent_at=data.validated_data.get("sent_at")
        )
        return Response({"results": results})


def _photo_json(request, photo) -> dict:
    kwargs = {"client_uuid": photo.client_uuid}
    return {
        "client_uuid": str(photo.client_uuid),
        "id": photo.pk,
        "url": request.build_absolute_uri(reverse("inspections_api:photo", kwargs=kwargs)),
        "thumbnail_url": request.build_absolute_uri(reverse("inspections_api:photo-thumb", kwargs=kwargs)),
        "width": photo.width,
        "height": photo.height,
    }


class PhotoUploadView(APIView):
    parser_classes = [MultiPartParser, FormParser]

    @extend_schema(
        request=s.PhotoUploadInput,
        responses={
            200: s.PhotoOutput,
            201: s.PhotoOutput,
            400: BAD,
            403: READ_ONLY,
            404: NOT_FOUND,
        },
        tags=["inspections"],
    )
    def post(self, request):
        data = s.PhotoUploadInput(data=request.data)
        data.is_valid(raise_exception=True)
        wo = selectors.work_order_for_field_work(user=request.user, public_id=data.validated_data["work_order"])
        upload = data.validated_data["file"]
        if upload.size > settings.PLENUM_PHOTO_MAX_BYTES:
            raise ValidationError(
                {
                    "file": [
                        f"the image is {upload.size / 1048576:.1f} MB; at most "
                        f"{settings.PLENUM_PHOTO_MAX_BYTES / 1048576:.1f} MB is allowed"
                    ]
                }
            )
        photo, created = services.photo_upload(
            user=request.user, work_order=wo, client_uuid=data.validated_data["client_uuid"], data=upload.read()
        )
        return Response(_photo_json(request, photo), status=status.HTTP_201_CREATED if created else status.HTTP_200_OK)


class PhotoFileView(APIView):
    thumbnail = False

    @extend_schema(responses={(200, "image/*"): bytes, 404: NOT_FOUND}, tags=["inspections"])
    def get(self, request, client_uuid):
        photo = selectors.photo_for(user=request.user, client_uuid=client_uuid)
        f = photo.thumbnail if self.thumbnail else photo.image
        content_type = "image/jpeg" if self.thumbnail else photo.content_type
        name = f.name.rsplit("/", 1)[-1]
        response = FileResponse(f.open("rb"), content_type=content_type)
        response["X-Content-Type-Options"] = "nosniff"
        response["Content-Disposition"] = f'inline; filename="{name}"'
        response["Cache-Control"] = "private, max-age=3600"
        response["Content-Security-Policy"] = "default-src 'none'; sandbox"
        return response


class TemplatesView(APIView):
    @extend_schema(responses={200: s.TemplateOutput(many=True)}, tags=["inspections"])
    def get(self, request):
        out = []
        for t in services.templates_current().values():
            out.append(
                {
                    "code": t.code,
                    "version": t.version,
                    "title": t.title,
                    "cautions": t.cautions,
                    "items": [
                        {
                            "key": i.api_key,
                            "kind": i.kind,
                            "label": i.label,
                            "quantity": i.quantity,
                            "component_kind": i.component_kind,
                            "required": i.required,
                        }
                        for i in t.items.all()
                    ],
                }
            )
        return Response(out)


def _reader(request) -> dict:
    return {"unit_system": getattr(request.user, "unit_system", "si")}


def _inspection(request, pk) -> Inspection:
    qs = selectors.inspections_visible_to(user=request.user).prefetch_related(
        "readings__item__template",
        "readings__component",
        "evaluations__component",
        "amendments__created_by",
        "amendments__findings",
    )
    return selectors.inspection_for(user=request.user, pk=pk, queryset=qs)


class InspectionDetailView(APIView):
    @extend_schema(responses={200: s.InspectionOutput, 404: NOT_FOUND}, tags=["inspections"])
    def get(self, request, pk):
        return Response(s.InspectionOutput(_inspection(request, pk), context=_reader(request)).data)


class AmendmentCreateView(APIView):
    parser_classes = [CheckedJSONParser]

    @extend_schema(
        request=s.AmendmentInput,
        responses={201: s.AmendmentOutput, 400: BAD, 403: ErrorOutput, 404: NOT_FOUND},
        tags=["inspections"],
    )
    def post(self, request, pk):
        inspection = _inspection(request, pk)
        data = s.AmendmentInput(data=request.data)
        data.is_valid(raise_exception=True)
        a = services.inspection_amend(inspection=inspection, by=request.user, **data.validated_data)
        found = a.findings.select_related("corrective_work_order").order_by("pk")
        return Response(
            {
                "id": a.pk,
                "public_id": str(a.public_id),
                "inspection_id": inspection.pk,
                "reason": a.reason,
                "created_at": a.created_at,
                "changes": a.changes,
                "findings": [
                    selectors.finding_shape(finding=f, unit_system=_reader(request)["unit_system"]) for f in found
                ],
            },
            status=status.HTTP_201_CREATED,
        )


class FlaggedListView(APIView):
    @extend_schema(responses={200: s.FlaggedFormOutput(many=True)}, tags=["inspections"])
    def get(self, request):
        return Response(s.FlaggedFormOutput(selectors.flagged_forms_for(user=request.user), many=True).data)


class FlagResolveView(APIView):
    @extend_schema(
        request=s.NoteInput,
        responses={200: s.InspectionOutput, 400: BAD, 403: ErrorOutput, 404: NOT_FOUND},
        tags=["inspections"],
    )
    def post(self, request, pk):
        inspection = _inspection(request, pk)
        data = s.NoteInput(data=request.data)
        data.is_valid(raise_exception=True)
        services.flagged_form_resolve(inspection=inspection, by=request.user, note=data.validated_data["note"])
        return Response(s.InspectionOutput(_inspection(request, pk), context=_reader(request)).data)


class VerifyView(APIView):
    @extend_schema(
        request=None,
        responses={200: s.InspectionOutput, 400: BAD, 403: ErrorOutput, 404: NOT_FOUND},
        tags=["inspections"],
    )
    def post(self, request, pk):
        services.inspection_verify(inspection=_inspection(request, pk), by=request.user)
        return Response(s.InspectionOutput(_inspection(request, pk), context=_reader(request)).data)


class FreezeReadinessView(APIView):
    @extend_schema(
        parameters=[OpenApiParameter("site", int, description="Only this site (its id); default every site you see.")],
        responses={200: s.FreezeReadinessUnitOutput(many=True), 400: BAD},
        tags=["inspections"],
        description="Freeze-protection readiness of every unit with preheat, from what its tests found "
        "(inspections/freeze/), as the pages and the compliance report show it.",
    )
    def get(self, request):
        site_ids = None
        raw = request.query_params.get("site")
        if raw is not None:
            errors = FieldErrors()
            # Ids are 64-bit: a bigger number is no site, and the database cannot even compare it (was a 500).
            site = check_integer(raw, key="site", label="Site (its id)", errors=errors, minimum=1, maximum=INT64_MAX)
            errors.raise_if_any()
            site_ids = [site]
        rows = freeze.freeze_readiness_for(user=request.user, site_ids=site_ids, as_of=timezone.now())
        return Response([freeze.readiness_json(r) for r in rows])


class FindingListView(APIView):
    @extend_schema(
        parameters=[
            OpenApiParameter("state", str, enum=["open", "closed", "all"], description="Default open."),
            OpenApiParameter("unit", str, description="Only this unit (its label code)."),
        ],
        responses={200: s.FindingOutput(many=True), 400: BAD},
        tags=["inspections"],
        description="Findings you may see, oldest first seen first: one per unit, part and problem, with how many "
        "visits saw it. The same shape as the findings in sync and amendment answers.",
    )
    def get(self, request):
        state = request.query_params.get("state", "open")
        if state not in ("open", "closed", "all"):
            raise ValidationError({"state": [f"state={state!r} is not one of open, closed, all"]})
        rows = selectors.findings_visible_to(user=request.user).exclude(close_cause="merged")
        if state != "all":
            rows = rows.filter(state=state)
        unit = request.query_params.get("unit")
        if unit:
            rows = rows.filter(ahu__label_code=unit)
        system = _reader(request)["unit_system"]
        rows = rows.select_related("latest_evaluation", "evaluation").order_by("opened_at", "pk")
        return Response([selectors.finding_shape(finding=f, unit_system=system) for f in rows])
