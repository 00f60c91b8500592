"""Query strings with NUL or other control characters are refused before any view reads them.

Every list filter (``?site=``, ``?unit=``, ``?state=``, ``?search=``...) ends up in a database query, and
PostgreSQL cannot hold NUL in text: such a value was a DataError (a 500) in whichever view read it. No
parameter of ours means anything with a control character in it, so one check here covers them all; the
answer names the parameter. (Bodies are checked field by field by each app's input policy.)
"""

import re

from django.http import HttpResponseBadRequest, JsonResponse

_CONTROL = re.compile(r"[\x00-\x1f\x7f]")


class QueryControlCharactersMiddleware:
    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        bad = sorted({key for key, value in request.GET.items() if _CONTROL.search(key) or _CONTROL.search(value)})
        if bad:
            message = "contains control characters (such as NUL); remove them"
            if request.path.startswith("/api/"):
                errors = {key if not _CONTROL.search(key) else "query": [f"{key!r} {message}"] for key in bad}
                return JsonResponse({"detail": f"The address's {', '.join(map(repr, bad))} {message}.",
                                     "errors": errors}, status=400)  # fmt: skip
            return HttpResponseBadRequest(f"The address's {', '.join(map(repr, bad))} {message}.")
        return self.get_response(request)
