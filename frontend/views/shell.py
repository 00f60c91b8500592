"""Login, the role-based home, the manifest, the service worker and the offline page."""

from django.contrib.auth.decorators import login_required
from django.http import HttpResponse, JsonResponse
from django.shortcuts import redirect, render
from django.views.decorators.cache import never_cache
from django.views.decorators.http import require_GET

from accounts.models import Role
from accounts.selectors import primary_role

from .. import pwa

HOME_BY_ROLE = {
    Role.TECHNICIAN: "frontend:today",
    Role.SUPERVISOR: "frontend:board",
    Role.ADMIN: "frontend:board",
    Role.PROPERTY_MANAGER: "frontend:dashboard",
}


@login_required
def home(request):
    target = HOME_BY_ROLE.get(primary_role(user=request.user))
    if target:
        return redirect(target)
    return render(request, "frontend/home.html")


@require_GET
@never_cache
def service_worker(request):
    response = HttpResponse(pwa.service_worker_source(), content_type="application/javascript; charset=utf-8")
    response["Service-Worker-Allowed"] = "/"
    return response


@require_GET
def manifest(request):
    response = JsonResponse(pwa.manifest(), content_type="application/manifest+json")
    response["Cache-Control"] = "no-cache"
    return response


@require_GET
def offline(request):
    return render(request, "frontend/offline.html")
