"""The app's URLs plus a bare JSON endpoint, the baseline the load figures are divided by."""

import json

from django.http import JsonResponse
from django.urls import path
from django.views.decorators.csrf import csrf_exempt

from config.urls import urlpatterns as app_urlpatterns


@csrf_exempt
def baseline(request):
    """The least a Django JSON endpoint does in this server: no database, no authentication.

    On POST it parses the body, so it is also the baseline for the sync endpoint's bodies.
    """
    if request.method == "POST":
        body = json.loads(request.body)
        return JsonResponse({"received": len(body.get("forms", []))})
    return JsonResponse({"ok": True, "items": []})


urlpatterns = [path("bench/baseline/", baseline, name="bench-baseline"), *app_urlpatterns]
