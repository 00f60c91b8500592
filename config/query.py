"""Query strings with NUL or other control characters are refused before any view reads them.

Every list filter (``?site=``, ``?unit=``, ``?state=``, ``?search=``...) ends up in a database query, and
PostgreSQL cannot hold NUL in text: such a value was a DataError (a 500) in whichever view read it. No
parameter of ours means anything with a control character in it, so one check here covers them all; the
answer names the parameter. (Bodies are checked field by field by each app's input policy.)
"""

import re

from django.http import HttpResponseBadRequest, JsonResponse

from .api import error_body
from .errors import is_api

_CONTROL = re.compile(r"[\x00-\x1f\x7f]")
MESSAGE = "contains control characters (such as NUL); remove them"


class QueryControlCharactersMiddleware:
    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        # On every request: a control character arrives percent-encoded (or raw), so a query string with
        # neither is passed on without decoding it.
        query = request.META.get("QUERY_STRING", "")
        if not query or ("%" not in query and not _CONTROL.search(query)):
            return self.get_response(request)
        # Every value of a repeated parameter: a view reading the list (``getlist``) sees them all.
        bad = sorted(
            {key for key, values in request.GET.lists() if _CONTROL.search(key) or any(map(_CONTROL.search, values))}
        )
        if not bad:
            return self.get_response(request)
        detail = f"The address's {', '.join(map(repr, bad))} {MESSAGE}."
        if is_api(request):
            errors = {key if not _CONTROL.search(key) else "query": [f"{key!r} {MESSAGE}"] for key in bad}
            return JsonResponse(error_body(detail=detail, errors=errors), status=400)
        return HttpResponseBadRequest(detail)
