"""Download of a finished report, for those who may see every site it covers.

The API's ``download_url`` points here, so the route takes the API's token as well as the session: a
request with ``Authorization: Token …`` is authenticated exactly as the API does it (401 for a bad one),
any other goes through the sign-in page. Either way the access check is ``selectors.report_for``.
"""

from django.contrib.auth.views import redirect_to_login
from django.http import FileResponse, HttpResponse, JsonResponse
from django.views.decorators.http import require_GET
from rest_framework.authentication import TokenAuthentication
from rest_framework.exceptions import AuthenticationFailed

from . import selectors
from .models import Report


@require_GET
def report_download(request, public_id):
    authentication = TokenAuthentication()
    try:
        found = authentication.authenticate(request)  # None when the request carries no token
    except AuthenticationFailed as exc:
        response = JsonResponse({"detail": str(exc.detail)}, status=401)
        response["WWW-Authenticate"] = authentication.authenticate_header(request)
        return response
    if found is not None:
        request.user = found[0]
    elif not request.user.is_authenticated:
        return redirect_to_login(request.get_full_path())
    report = selectors.report_for(user=request.user, public_id=public_id)
    if report.status != Report.Status.DONE or not report.file:
        return HttpResponse(
            f"The report is {report.get_status_display().lower()}; try again shortly.",
            status=409 if report.status == Report.Status.FAILED else 202,
            content_type="text/plain; charset=utf-8",
        )
    response = FileResponse(
        report.file.open("rb"),
        content_type="application/pdf",
        as_attachment=request.GET.get("inline") != "1",
        filename=report.filename,
    )
    response["X-Content-SHA256"] = report.sha256
    response["Cache-Control"] = "private, no-store"
    return response
