"""REST API of the registry: sites, buildings, units, components, kinds, CSV import/export.

Every read goes through ``inventory.selectors`` (the tenancy rule): a row the
person may not see does not exist for them (404). Writes need a supervisor or
admin of the row's organisation (``sites_managed_by``), otherwise 403; so do CSV
import and export.

What a view reads from the request (who may change a site, the organisation a new row goes into, a list's
filters) is ``inventory.api_requests``; the documented refusals and a list's pages are ``inventory.api_answers``.
"""

import io

from django.core.exceptions import PermissionDenied
from django.http import Http404, HttpResponse
from django.shortcuts import get_object_or_404
from drf_spectacular.utils import OpenApiParameter, OpenApiResponse, extend_schema
from rest_framework import serializers, status
from rest_framework.parsers import FormParser, MultiPartParser
from rest_framework.response import Response
from rest_framework.views import APIView

from accounts.api_errors import RowErrorsOutput

from . import csv_io, import_jobs, selectors, services
from .api_answers import R400, R401, R403, R404, page_answer, page_output
from .api_requests import KIND_PARAMETER, filtered, kind_check, managed_organisation, require_manages
from .filters import AHUFilter, BuildingFilter, ComponentFilter, SiteFilter
from .models import Component
from .serializers import (
    AHUInput,
    AHUOutput,
    AHUSavedOutput,
    AHUTreeOutput,
    BuildingInput,
    BuildingOutput,
    ComponentInput,
    ComponentKindOutput,
    ComponentOutput,
    ComponentSavedOutput,
    ImportInput,
    ImportJobOutput,
    ImportResultOutput,
    SiteInput,
    SiteOutput,
)
from .specs import SPECS


# ---------------------------------------------------------------------------
# Sites
# ---------------------------------------------------------------------------
class SiteListView(APIView):
    @extend_schema(
        summary="List the sites you may see",
        parameters=[
            OpenApiParameter("organisation", str, description="organisation slug"),
            OpenApiParameter("search", str, description="code or name contains"),
        ],
        operation_id="inventory_sites_list",
        responses={200: page_output(SiteOutput), 400: R400, 401: R401},
    )
    def get(self, request):
        qs = selectors.sites_visible_to(user=request.user).select_related("organisation", "client")
        return page_answer(request, self, filtered(SiteFilter, request, qs), SiteOutput)

    @extend_schema(summary="Add a site", request=SiteInput, responses={201: SiteOutput, 400: R400, 403: R403})
    def post(self, request):
        data = SiteInput(data=request.data, context={"request": request})
        data.is_valid(raise_exception=True)
        fields = dict(data.validated_data)
        org = fields.pop("organisation", None)
        fields["organisation"] = managed_organisation(user=request.user, slug=org.slug if org else None)
        site = services.site_create(**fields)
        return Response(SiteOutput(site).data, status=status.HTTP_201_CREATED)


class SiteDetailView(APIView):
    def _get(self, request, pk):
        return get_object_or_404(selectors.sites_visible_to(user=request.user).select_related("organisation"), pk=pk)

    @extend_schema(summary="One site", responses={200: SiteOutput, 404: R404})
    def get(self, request, pk: int):
        return Response(SiteOutput(self._get(request, pk)).data)

    @extend_schema(
        summary="Change a site", request=SiteInput, responses={200: SiteOutput, 400: R400, 403: R403, 404: R404}
    )
    def patch(self, request, pk: int):
        site = self._get(request, pk)
        require_manages(user=request.user, site_id=site.pk)
        data = SiteInput(site, data=request.data, partial=True, context={"request": request})
        data.is_valid(raise_exception=True)
        fields = dict(data.validated_data)
        if "organisation" in fields and fields["organisation"].pk != site.organisation_id:
            raise serializers.ValidationError({"organisation": ["a site cannot move to another organisation"]})
        fields.pop("organisation", None)
        site = services.site_update(site=site, **fields)
        return Response(SiteOutput(site).data)


# ---------------------------------------------------------------------------
# Buildings
# ---------------------------------------------------------------------------
class BuildingListView(APIView):
    @extend_schema(
        summary="List the buildings you may see",
        parameters=[OpenApiParameter("search", str, description="code or name contains")],
        operation_id="inventory_buildings_list",
        responses={200: page_output(BuildingOutput), 400: R400},
    )
    def get(self, request):
        qs = selectors.buildings_visible_to(user=request.user)
        return page_answer(request, self, filtered(BuildingFilter, request, qs), BuildingOutput)

    @extend_schema(
        summary="Add a building", request=BuildingInput, responses={201: BuildingOutput, 400: R400, 403: R403}
    )
    def post(self, request):
        data = BuildingInput(data=request.data, context={"request": request})
        data.is_valid(raise_exception=True)
        require_manages(user=request.user, site_id=data.validated_data["site"].pk)
        building = services.building_create(**data.validated_data)
        return Response(BuildingOutput(building).data, status=status.HTTP_201_CREATED)


class BuildingDetailView(APIView):
    def _get(self, request, pk):
        return get_object_or_404(selectors.buildings_visible_to(user=request.user), pk=pk)

    @extend_schema(summary="One building", responses={200: BuildingOutput, 404: R404})
    def get(self, request, pk: int):
        return Response(BuildingOutput(self._get(request, pk)).data)

    @extend_schema(
        summary="Change a building",
        request=BuildingInput,
        responses={200: BuildingOutput, 400: R400, 403: R403, 404: R404},
    )
    def patch(self, request, pk: int):
        building = self._get(request, pk)
        require_manages(user=request.user, site_id=building.site_id)
        data = BuildingInput(building, data=request.data, partial=True, context={"request": request})
        data.is_valid(raise_exception=True)
        if "site" in data.validated_data:
            require_manages(user=request.user, site_id=data.validated_data["site"].pk)
        building = services.building_update(building=building, **data.validated_data)
        return Response(BuildingOutput(building).data)


# ---------------------------------------------------------------------------
# Units
# ---------------------------------------------------------------------------
class AHUListView(APIView):
    @extend_schema(
        summary="List the air handling units you may see",
        parameters=[OpenApiParameter("search", str, description="tag, label code or area served")],
        operation_id="inventory_ahus_list",
        responses={200: page_output(AHUOutput), 400: R400},
    )
    def get(self, request):
        qs = selectors.ahus_visible_to(user=request.user)
        return page_answer(request, self, filtered(AHUFilter, request, qs), AHUOutput)

    @extend_schema(summary="Add a unit", request=AHUInput, responses={201: AHUSavedOutput, 400: R400, 403: R403})
    def post(self, request):
        data = AHUInput(data=request.data, context={"request": request})
        data.is_valid(raise_exception=True)
        require_manages(user=request.user, site_id=data.validated_data["building"].site_id)
        ahu = services.ahu_create(**data.validated_data)
        return Response(AHUSavedOutput(ahu).data, status=status.HTTP_201_CREATED)


class AHUDetailView(APIView):
    def _get(self, request, pk):
        return get_object_or_404(selectors.ahus_visible_to(user=request.user), pk=pk)

    @extend_schema(summary="One unit", responses={200: AHUOutput, 404: R404})
    def get(self, request, pk: int):
        return Response(AHUOutput(self._get(request, pk)).data)

    @extend_schema(
        summary="Change a unit",
        description="The answer's `warnings` judge the unit's parts against it as saved (a filter bank's design "
        "airflow outside 50–110 % of the unit's design supply airflow, a fan motor far from its design point).",
        request=AHUInput,
        responses={200: AHUSavedOutput, 400: R400, 403: R403, 404: R404},
    )
    def patch(self, request, pk: int):
        ahu = self._get(request, pk)
        require_manages(user=request.user, site_id=ahu.building.site_id)
        data = AHUInput(ahu, data=request.data, partial=True, context={"request": request})
        data.is_valid(raise_exception=True)
        if "building" in data.validated_data:
            require_manages(user=request.user, site_id=data.validated_data["building"].site_id)
        ahu = services.ahu_update(ahu=ahu, **data.validated_data)
        return Response(AHUSavedOutput(ahu).data)


class AHUTreeView(APIView):
    @extend_schema(
        summary="A unit with its nested component tree, in airstream order",
        responses={200: AHUTreeOutput, 404: R404},
    )
    def get(self, request, pk: int):
        ahu = get_object_or_404(selectors.ahus_visible_to(user=request.user), pk=pk)
        tree = selectors.component_tree(ahu=ahu)
        return Response(AHUTreeOutput({"unit": ahu, "components": tree}).data)


# ---------------------------------------------------------------------------
# Components
# ---------------------------------------------------------------------------
class ComponentListView(APIView):
    @extend_schema(
        summary="List the components you may see",
        parameters=[OpenApiParameter("search", str, description="name, label code or unit tag")],
        operation_id="inventory_components_list",
        responses={200: page_output(ComponentOutput), 400: R400},
    )
    def get(self, request):
        qs = selectors.components_visible_to(user=request.user)
        return page_answer(request, self, filtered(ComponentFilter, request, qs), ComponentOutput)

    @extend_schema(
        summary="Add a component",
        description="Specs are validated per kind (see component-kinds); errors are keyed `specs.<field>`. Values "
        "saved but unlikely are listed in the answer's `warnings`, keyed alike.",
        request=ComponentInput,
        responses={201: ComponentSavedOutput, 400: R400, 403: R403},
    )
    def post(self, request):
        data = ComponentInput(data=request.data, context={"request": request})
        data.is_valid(raise_exception=True)
        require_manages(user=request.user, site_id=data.validated_data["ahu"].building.site_id)
        component = services.component_create(**data.validated_data)
        return Response(ComponentSavedOutput(component).data, status=status.HTTP_201_CREATED)


class ComponentDetailView(APIView):
    def _get(self, request, pk):
        return get_object_or_404(selectors.components_visible_to(user=request.user), pk=pk)

    @extend_schema(summary="One component", responses={200: ComponentOutput, 404: R404})
    def get(self, request, pk: int):
        return Response(ComponentOutput(self._get(request, pk)).data)

    @extend_schema(
        summary="Change a component",
        request=ComponentInput,
        responses={200: ComponentSavedOutput, 400: R400, 403: R403, 404: R404},
    )
    def patch(self, request, pk: int):
        component = self._get(request, pk)
        require_manages(user=request.user, site_id=component.ahu.building.site_id)
        data = ComponentInput(component, data=request.data, partial=True, context={"request": request})
        data.is_valid(raise_exception=True)
        if "ahu" in data.validated_data:
            require_manages(user=request.user, site_id=data.validated_data["ahu"].building.site_id)
        component = services.component_update(component=component, **data.validated_data)
        return Response(ComponentSavedOutput(component).data)

    @extend_schema(
        summary="Remove a component (and the parts inside it)",
        responses={204: None, 400: R400, 403: R403, 404: R404},
    )
    def delete(self, request, pk: int):
        component = self._get(request, pk)
        require_manages(user=request.user, site_id=component.ahu.building.site_id)
        services.component_delete(component=component)
        return Response(status=status.HTTP_204_NO_CONTENT)


class ComponentKindsView(APIView):
    @extend_schema(
        summary="Component kinds and their spec fields (SI units), for building forms",
        responses={200: ComponentKindOutput(many=True)},
    )
    def get(self, request):
        kinds = []
        labels = dict(Component._meta.get_field("kind").choices)
        for kind, fields in SPECS.items():
            kinds.append(
                {
                    "kind": kind,
                    "label": str(labels[kind]),
                    "fields": [
                        {
                            "name": f.name,
                            "label": f.label,
                            "type": f.kind,
                            "unit": f.unit,
                            "min": f.minimum,
                            "max": f.maximum,
                            "choices": list(f.choices),
                            "required": f.required,
                            "allowed": f.allowed(),
                        }
                        for f in fields
                    ],
                }
            )
        return Response(ComponentKindOutput(kinds, many=True).data)


# ---------------------------------------------------------------------------
# CSV import and export
# ---------------------------------------------------------------------------


class ImportView(APIView):
    parser_classes = [MultiPartParser, FormParser]

    @extend_schema(
        summary="Import a registry CSV: every row is checked; one bad row imports nothing",
        description=(
            "Files of 10,000 rows or more (or any file with `background=true`) are imported by a background "
            "job: the answer is 202 with the job, to be polled at its `url` until its status is `done`, "
            "`refused` (every bad row listed, nothing imported) or `failed`."
        ),
        parameters=[KIND_PARAMETER],
        request={"multipart/form-data": ImportInput},
        responses={
            200: ImportResultOutput,
            202: OpenApiResponse(ImportJobOutput, description="Queued as a background job."),
            400: OpenApiResponse(RowErrorsOutput, description="Every bad row: line, column, value, reason."),
            403: R403,
            404: R404,
        },
    )
    def post(self, request, kind: str):
        kind_check(kind)
        data = ImportInput(data=request.data)
        data.is_valid(raise_exception=True)
        org = managed_organisation(user=request.user, slug=data.validated_data.get("organisation"))
        upload = data.validated_data["file"]
        dry_run = data.validated_data["dry_run"]
        try:
            text = csv_io.decode_upload(upload.read()).read()
            background = data.validated_data.get("background")
            if background is None:
                background = import_jobs.import_runs_in_background(text=text)
            if background:
                job = import_jobs.import_job_create(
                    organisation=org, kind=kind, text=text, by=request.user, dry_run=dry_run, file_name=upload.name
                )
                return Response(ImportJobOutput(job).data, status=status.HTTP_202_ACCEPTED)
            result = csv_io.registry_import(kind=kind, source=io.StringIO(text, newline=""), organisation=org,
                                            dry_run=dry_run)  # fmt: skip
        except csv_io.ImportFailed as exc:
            body = {"detail": str(exc), "errors": [e.as_dict() for e in exc.errors]}
            return Response(body, status=status.HTTP_400_BAD_REQUEST)
        return Response(ImportResultOutput(result.as_dict()).data)


class ImportJobView(APIView):
    @extend_schema(
        summary="A background registry import: status, rows checked of the total, and every bad row",
        responses={200: ImportJobOutput, 404: R404},
    )
    def get(self, request, public_id):
        job = selectors.import_job_for(user=request.user, public_id=public_id)
        return Response(ImportJobOutput(job).data)


class ExportView(APIView):
    @extend_schema(
        summary="Export the registry as CSV (the import format); supervisors and admins only",
        description=(
            "UTF-8 with a byte-order mark and CRLF line ends. Text cells a spreadsheet would run as a formula "
            "(beginning with = + - @ | % or a tab or carriage return) are written with a leading apostrophe; "
            "numbers stay numbers."
        ),
        parameters=[KIND_PARAMETER, OpenApiParameter("site", str, description="only this site code")],
        responses={(200, "text/csv"): OpenApiResponse(str), 400: R400, 403: R403, 404: R404},
    )
    def get(self, request, kind: str):
        kind_check(kind)
        if not selectors.organisations_managed_by(user=request.user).exists():
            # The registry file is a contractor's working tool; property managers get their sites'
            # records as PDF reports, technicians their units through their work.
            raise PermissionDenied(
                "Only a supervisor or admin of the organisation may export the registry; "
                "property managers download their sites' records as PDF reports."
            )
        sites = selectors.sites_managed_by(user=request.user)
        asked = request.query_params.get("site")
        if asked:
            sites = sites.filter(code=asked)
            if not sites.exists():
                # Not an empty file that reads as "no units there": the same answer as any site one may not see.
                raise Http404(f"site={asked!r}: no site with that code among the sites you manage")
        response = HttpResponse(content_type="text/csv; charset=utf-8")
        response["Content-Disposition"] = f'attachment; filename="plenum-{kind}.csv"'
        csv_io.registry_export(kind=kind, sites=sites, out=response)
        return response
