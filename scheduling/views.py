"""Pages of the scheduling app: the technician's iCalendar feed."""

from django.http import Http404, HttpResponse
from django.views.decorators.http import require_GET

from .calendar import feed_ics
from .models import CalendarFeed


@require_GET
def calendar_feed(request, token: str):
    """The technician's assigned visits; the token is the only key, so a revoked or unknown one is a 404."""
    feed = CalendarFeed.objects.filter(token=token, revoked_at__isnull=True).select_related("user").first()
    if feed is None or not feed.user.is_active:
        raise Http404("no such calendar")
    response = HttpResponse(feed_ics(user=feed.user), content_type="text/calendar; charset=utf-8")
    response["Cache-Control"] = "private, max-age=300"
    return response
