"""REST API of reports: ask for one, read its state. The file itself comes from the download view.

Tenancy on every access: a report whose sites the person cannot all see does not exist for them (404).
"""

from drf_spectacular.utils import OpenApiResponse, extend_schema
from rest_framework import serializers, status
from rest_framework.response import Response
from rest_framework.views import APIView

from accounts.api_errors import ErrorOutput

from . import selectors, services
from .models import Report

R400 = OpenApiResponse(ErrorOutput, description="Bad input: `errors` names each field, the value and what is allowed.")
R401 = OpenApiResponse(ErrorOutput, description="Not signed in, or the token is unknown or revoked.")
R404 = OpenApiResponse(ErrorOutput, description="No such record, or one covering a site the person may not see.")


class ReportInput(serializers.Serializer):
    kind = serializers.ChoiceField(choices=Report.Kind.choices)
    parameters = serializers.DictField(
        required=False,
        default=dict,
        help_text=(
            "inspection: {work_order: <public id>}; compliance: {sites: [ids] (empty = every site you see), "
            "start, end (YYYY-MM-DD)}; unit_history: {unit: id, start, end}; "
            "labels: {units: [ids], components: [ids], layout: a4-3x8 | letter-3x10}. "
            "Readings are shown in unit_system (si | us), by default the requester's own."
        ),
    )
    pdfa = serializers.BooleanField(
        required=False, default=False, help_text="Archival PDF/A (inspection, compliance, unit history)."
    )


class ReportOutput(serializers.ModelSerializer):
    download_url = serializers.SerializerMethodField()
    requested_by = serializers.StringRelatedField()
    covers = serializers.SerializerMethodField(
        help_text="What the report covers in words, as the reports page says it: its sites, unit or work order "
        "and its period (e.g. 'AHU-01 in North block, Harbour House · 1 Dec 2025 – 30 Nov 2026')."
    )

    class Meta:
        model = Report
        fields = [
            "public_id",
            "kind",
            "covers",
            "status",
            "error",
            "parameters",
            "site_ids",
            "pdfa",
            "requested_by",
            "created_at",
            "finished_at",
            "sha256",
            "size_bytes",
            "page_count",
            "download_url",
        ]

    def get_covers(self, obj: Report) -> str:
        # A list passes every report's words in the context (names resolved in bulk); one report asks alone.
        known = self.context.get("covers") or {}
        return known[obj.pk] if obj.pk in known else selectors.report_covers(report=obj)

    def get_download_url(self, obj: Report) -> str | None:
        if obj.status != Report.Status.DONE:
            return None
        request = self.context.get("request")
        url = obj.get_absolute_url()
        return request.build_absolute_uri(url) if request else url


class ReportCreateApi(APIView):
    @extend_schema(
        operation_id="report_create",
        summary="Ask for a report (rendered in the background)",
        request=ReportInput,
        responses={202: ReportOutput, 400: R400, 401: R401, 404: R404},
        tags=["reports"],
    )
    def post(self, request):
        data = ReportInput(data=request.data)
        data.is_valid(raise_exception=True)
        report = services.report_request(user=request.user, **data.validated_data)
        report.refresh_from_db()
        return Response(ReportOutput(report, context={"request": request}).data, status=status.HTTP_202_ACCEPTED)


class ReportDetailApi(APIView):
    @extend_schema(
        operation_id="report_detail",
        summary="A report's state, checksum and download address",
        responses={200: ReportOutput, 401: R401, 404: R404},
        tags=["reports"],
    )
    def get(self, request, public_id):
        report = selectors.report_for(user=request.user, public_id=public_id)
        return Response(ReportOutput(report, context={"request": request}).data)
