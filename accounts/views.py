"""Password reset by e-mail: Django's own views, in the app's pages, with a link to the public address.

The answer never tells whether an address belongs to anybody: the same page either way, and the
e-mail (only to active people with that address, as Django chooses) is sent by a Celery worker
where a broker is configured, so the answer takes no longer when there is someone to write to.
Each client address and each e-mail address may ask a few times an hour
(``PLENUM_PASSWORD_RESETS_PER_HOUR``); past that the client is asked to wait, and extra requests
for one e-mail address are dropped without a word.
"""

import math

from axes.helpers import get_cool_off, get_failure_limit
from axes.utils import reset as axes_reset
from django.conf import settings
from django.contrib.auth import views as auth_views
from django.core.cache import cache
from django.http import HttpRequest, HttpResponse, HttpResponseRedirect
from django.shortcuts import render
from django.urls import reverse_lazy

from .client_address import client_address
from .tasks import password_reset_email_send
from .tokens import invitation_token_generator

WINDOW_SECONDS = 3600


def _count(key: str) -> int:
    """One more request under ``key`` in the current hour; how many so far."""
    if cache.add(key, 1, WINDOW_SECONDS):
        return 1
    try:
        return cache.incr(key)
    except ValueError:  # expired between add and incr
        cache.set(key, 1, WINDOW_SECONDS)
        return 1


class PasswordResetView(auth_views.PasswordResetView):
    template_name = "frontend/password_reset_form.html"
    success_url = reverse_lazy("accounts:password_reset_done")

    def form_valid(self, form):
        limit = settings.PLENUM_PASSWORD_RESETS_PER_HOUR
        if _count(f"password-reset:client:{client_address(self.request)}") > limit:
            return render(
                self.request,
                "frontend/password_reset_form.html",
                {"form": form, "too_many": True, "limit": limit},
                status=429,
            )
        email = form.cleaned_data["email"]
        if _count(f"password-reset:email:{email.strip().lower()}") <= limit:
            # Django's choice of recipients (active, usable password, the address matched without case);
            # the e-mail itself goes from a worker (accounts.tasks), so both answers take as long.
            for user in form.get_users(email):
                password_reset_email_send.delay(user_id=user.pk)
        return HttpResponseRedirect(self.get_success_url())  # the same page whether anybody was found or not


class PasswordResetDoneView(auth_views.PasswordResetDoneView):
    template_name = "frontend/password_reset_done.html"


class PasswordResetConfirmView(auth_views.PasswordResetConfirmView):
    template_name = "frontend/password_reset_confirm.html"
    success_url = reverse_lazy("accounts:password_reset_complete")

    def form_valid(self, form):
        response = super().form_valid(form)
        # The person proved they own the address: wrong-password locks on their username no longer apply.
        axes_reset(username=form.user.get_username())
        return response


class InvitationConfirmView(PasswordResetConfirmView):
    """The invitation's set-password page: the same form, checked against the invitation token (days, not hours)."""

    token_generator = invitation_token_generator


class PasswordResetCompleteView(auth_views.PasswordResetCompleteView):
    template_name = "frontend/password_reset_complete.html"


def locked_out(request: HttpRequest, original_response=None, credentials: dict | None = None) -> HttpResponse:
    """django-axes' answer once a username is paused for this client address (AXES_LOCKOUT_CALLABLE): 429."""
    cool_off = get_cool_off(request)
    minutes = max(1, math.ceil(cool_off.total_seconds() / 60)) if cool_off else 0
    context = {"failure_limit": get_failure_limit(request, credentials), "minutes": minutes}
    return render(request, "frontend/locked_out.html", context, status=429)
