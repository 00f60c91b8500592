"""The field calculator's API: the phone asks the server so formulas live in one place (engineering/)."""

from django.http import Http404
from drf_spectacular.utils import OpenApiResponse, extend_schema
from rest_framework import serializers
from rest_framework.response import Response
from rest_framework.views import APIView

from accounts.api_errors import ErrorOutput

from .calculators import CALCULATORS, CalcError, calculate, places_for


class CalcInput(serializers.Serializer):
    values = serializers.DictField(
        child=serializers.JSONField(),
        help_text="Input name → number in the user's display units (a choice's value; `place`: a site of yours,"
        " `site-<id>`, or `sea-level`).",
    )


class CalcRowOutput(serializers.Serializer):
    label = serializers.CharField()
    value = serializers.JSONField()
    unit = serializers.CharField(allow_blank=True)


class CalcOutput(serializers.Serializer):
    calculator = serializers.CharField()
    unit_system = serializers.CharField()
    results = CalcRowOutput(many=True)


class CalcView(APIView):
    @extend_schema(
        operation_id="calc_run",
        summary="Run one field calculation in the user's units",
        description="Calculators: " + ", ".join(CALCULATORS),
        request=CalcInput,
        responses={
            200: CalcOutput,
            400: OpenApiResponse(ErrorOutput, description="a value is missing, not a number or out of range"),
            404: OpenApiResponse(description="no calculator of that name"),
        },
    )
    def post(self, request, name: str):
        if name not in CALCULATORS:
            raise Http404(f"no calculator {name!r}; there are {', '.join(CALCULATORS)}")
        data = CalcInput(data=request.data)
        data.is_valid(raise_exception=True)
        system = request.user.unit_system
        try:
            rows = calculate(
                name=name, values=data.validated_data["values"], system=system, places=places_for(request.user)
            )
        except CalcError as exc:
            return Response({"detail": str(exc), "errors": exc.errors}, status=400)
        return Response(CalcOutput({"calculator": name, "unit_system": system, "results": rows}).data)
