"""Download of a finished report, for those who may see every site it covers."""

from django.contrib.auth.decorators import login_required
from django.http import FileResponse, HttpResponse
from django.views.decorators.http import require_GET

from . import selectors
from .models import Report


@require_GET
@login_required
def report_download(request, public_id):
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
