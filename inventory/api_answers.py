"""What the registry's API answers beyond a serializer (also for the automation API's lists): the documented
refusals and one page of a list, shape and answer."""

import functools

from drf_spectacular.utils import OpenApiResponse
from rest_framework import serializers
from rest_framework.pagination import LimitOffsetPagination

from accounts.api_errors import ErrorOutput

R400 = OpenApiResponse(ErrorOutput, description="Bad input: `errors` names each field, the value and what is allowed.")
R403 = OpenApiResponse(ErrorOutput, description="Signed in, but not a supervisor or admin of the organisation.")
R404 = OpenApiResponse(ErrorOutput, description="No such record, or not one the person may see.")
R401 = OpenApiResponse(ErrorOutput, description="Not signed in, or the token is unknown or revoked.")


@functools.cache
def page_output(output_class: type[serializers.Serializer]) -> type[serializers.Serializer]:
    """The shape of one page of ``output_class`` rows as ``LimitOffsetPagination`` answers it (for the schema)."""
    name = output_class.__name__.removesuffix("Output") + "PageOutput"
    fields = {
        "count": serializers.IntegerField(help_text="Rows in the whole list, not only this page."),
        "next": serializers.URLField(allow_null=True, help_text="The next page; null on the last."),
        "previous": serializers.URLField(allow_null=True, help_text="The page before; null on the first."),
        "results": output_class(many=True),
    }
    return type(name, (serializers.Serializer,), {"__module__": __name__, **fields})


def page_answer(request, view, queryset, output_class):
    """One page of ``queryset`` as ``output_class`` rows, with the whole count and the links to the pages beside it."""
    paginator = LimitOffsetPagination()
    page = paginator.paginate_queryset(queryset, request, view=view)
    return paginator.get_paginated_response(output_class(page, many=True).data)
