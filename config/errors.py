"""Error answers outside the views: pages in the app's look, JSON in the API's one shape.

Django calls these for an unknown URL (404), an unhandled exception (500), a request it
refuses to read (400: too large a body, too many fields, a bad host) and a form without a good
CSRF token (403, ``CSRF_FAILURE_VIEW``: most often a page left open until its token expired). Paths under ``/api/``
get ``{"detail": ..., "errors": {}}`` (``config.api.error_body``); pages get ``404.html``,
``500.html`` and ``400.html``/``413.html``. The 500 and 400 pages render without a request or a
database, since either may be what failed.

https://docs.djangoproject.com/en/5.2/topics/http/views/#customizing-error-views
"""

from django.conf import settings
from django.core.exceptions import RequestDataTooBig, TooManyFieldsSent, TooManyFilesSent
from django.http import HttpRequest, HttpResponse, JsonResponse
from django.template import loader
from django.views import defaults

from .api import error_body

API_PREFIX = "/api/"


def is_api(request: HttpRequest) -> bool:
    return request.path.startswith(API_PREFIX)


def _size_text(limit: int) -> str:
    return f"{limit / (1024 * 1024):.0f} MiB" if limit >= 1024 * 1024 else f"{limit} bytes"


def too_large(request: HttpRequest) -> HttpResponse:
    """413: the body is larger than ``DATA_UPLOAD_MAX_MEMORY_SIZE`` (files in a multipart form do not count)."""
    limit = settings.DATA_UPLOAD_MAX_MEMORY_SIZE
    detail = (
        f"The request is too large: at most {_size_text(limit)} of data is accepted in one request. "
        "Send less at a time."
    )
    if is_api(request):
        return JsonResponse(error_body(detail=detail), status=413)
    html = loader.get_template("413.html").render({"limit": _size_text(limit)})
    return HttpResponse(html, status=413)


def bad_request(request: HttpRequest, exception: Exception) -> HttpResponse:
    if isinstance(exception, RequestDataTooBig):
        return too_large(request)
    if is_api(request):
        if isinstance(exception, TooManyFieldsSent):
            detail = f"The request has too many fields: at most {settings.DATA_UPLOAD_MAX_NUMBER_FIELDS} are accepted."
        elif isinstance(exception, TooManyFilesSent):
            detail = f"The request has too many files: at most {settings.DATA_UPLOAD_MAX_NUMBER_FILES} are accepted."
        else:
            detail = "The request could not be read."
        return JsonResponse(error_body(detail=detail), status=400)
    return defaults.bad_request(request, exception)


def csrf_failure(request: HttpRequest, reason: str = "") -> HttpResponse:
    """403 for a form sent without a good CSRF token: the app's 403 page, which says the page may have expired
    (Django's own page has inline style the Content-Security-Policy blocks, and speaks of cookies and Referer)."""
    if is_api(request):
        detail = "The request's CSRF token is missing or wrong: reload the page and send it again."
        return JsonResponse(error_body(detail=detail), status=403)
    html = loader.get_template("403.html").render({}, request)
    return HttpResponse(html, status=403)


def page_not_found(request: HttpRequest, exception: Exception) -> HttpResponse:
    if is_api(request):
        detail = "There is nothing at this API address; the addresses are listed at /api/docs/."
        return JsonResponse(error_body(detail=detail), status=404)
    return defaults.page_not_found(request, exception)


def server_error(request: HttpRequest) -> HttpResponse:
    if is_api(request):
        detail = "The server failed to answer this request; the error has been logged. Try again later."
        return JsonResponse(error_body(detail=detail), status=500)
    return defaults.server_error(request)


class ApiBodyLimitMiddleware:
    """Refuse an API body over ``DATA_UPLOAD_MAX_MEMORY_SIZE`` with 413 before any view reads it.

    Django checks the limit only when ``request.body`` or ``request.POST`` is read; REST framework's
    parsers read the stream directly, so a JSON body of any size would otherwise be parsed in memory.
    Multipart forms are left to Django's parser, which counts the fields but not the files (photos
    have their own limit, ``PLENUM_PHOTO_MAX_BYTES``).
    """

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request: HttpRequest) -> HttpResponse:
        limit = settings.DATA_UPLOAD_MAX_MEMORY_SIZE
        if limit is not None and is_api(request) and not request.content_type.startswith("multipart/"):
            try:
                length = int(request.META.get("CONTENT_LENGTH") or 0)
            except ValueError:
                length = 0
            if length > limit:
                return too_large(request)
        return self.get_response(request)
