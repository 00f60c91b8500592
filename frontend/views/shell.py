"""Login, the role-based home, the manifest, the service worker and the offline page."""

from django.contrib.auth import views as auth_views
from django.contrib.auth.decorators import login_required
from django.contrib.auth.models import AnonymousUser
from django.http import HttpResponse, JsonResponse
from django.shortcuts import redirect, render
from django.views.decorators.cache import never_cache
from django.views.decorators.http import require_GET

from accounts.models import Role
from accounts.selectors import primary_role

from .. import pwa
from . import technician

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
def start(request):
    """The installed app's start address: a technician's day straight away (no redirect), anyone else their home.

    Offline, the service worker answers this address from the person's saved day (or the offline page)."""
    if request.user.is_authenticated and primary_role(user=request.user) == Role.TECHNICIAN:
        return technician.today(request)
    return home(request)


@require_GET
@never_cache
def person(request):
    """Who the session is, as the phone keys its outbox: sync.js sends forms only while this is their owner."""
    return JsonResponse({"person": pwa.person_key(user=request.user) if request.user.is_authenticated else ""})


class SignOutView(auth_views.LogoutView):
    """Sign-out also asks the browser to drop its HTTP cache of the person's pages.

    Only "cache": "storage" would also wipe IndexedDB, where finished forms wait to be sent. The service worker
    drops its data caches itself when it sees this request (sw_template.js)."""

    def post(self, request, *args, **kwargs):
        response = super().post(request, *args, **kwargs)
        response["Clear-Site-Data"] = '"cache"'
        return response


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
    """Precached for everyone who uses this phone: rendered as for nobody signed in, and says whose it is not."""
    request.user = AnonymousUser()
    return render(request, "frontend/offline.html", {"shell_page": True})
