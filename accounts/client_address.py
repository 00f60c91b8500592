"""The address a request came from, as the trusted proxies in front of the server saw it.

Behind a TLS-terminating proxy every request reaches Django from the proxy's own
address; the proxy appends the address it was connected from to ``X-Forwarded-For``.
With ``PLENUM_TRUSTED_PROXIES = n`` the n-th address from the right of that header
is the client (each of the n proxies appended one; anything further left was sent by
the client and may be forged). With 0, the default, the header is ignored and the
socket's peer (``REMOTE_ADDR``) is the client, so a forged header changes nothing.

Used by django-axes (``AXES_CLIENT_IP_CALLABLE``) for login throttling and by the
password-reset rate limit.
"""

import ipaddress

from django.conf import settings
from django.http import HttpRequest


def client_address(request: HttpRequest) -> str:
    """The client's IP address: ``REMOTE_ADDR``, or the address the outermost trusted proxy saw."""
    remote = request.META.get("REMOTE_ADDR", "") or ""
    trusted = settings.PLENUM_TRUSTED_PROXIES
    if trusted <= 0:
        return remote
    hops = [part.strip() for part in request.META.get("HTTP_X_FORWARDED_FOR", "").split(",") if part.strip()]
    if len(hops) < trusted:
        # Fewer hops than proxies: the request did not come through all of them, so nothing in it is vouched for.
        return remote
    candidate = hops[-trusted]
    try:
        return str(ipaddress.ip_address(candidate))
    except ValueError:
        return remote
