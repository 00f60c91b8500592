"""The invitation link's token: like the password-reset token (it stops working once a password is set) but
lasting days, not hours, and never accepted as a reset token nor a reset token as it (its own salt)."""

from __future__ import annotations

from django.conf import settings
from django.contrib.auth.tokens import PasswordResetTokenGenerator
from django.utils.crypto import constant_time_compare
from django.utils.http import base36_to_int

# An invitation waits a week for its newcomer; a password reset stays short (settings.PASSWORD_RESET_TIMEOUT).
INVITATION_TIMEOUT_DEFAULT = 7 * 24 * 3600


def invitation_timeout() -> int:
    return int(getattr(settings, "PLENUM_INVITATION_SECONDS", INVITATION_TIMEOUT_DEFAULT))


class InvitationTokenGenerator(PasswordResetTokenGenerator):
    key_salt = "plenum.accounts.tokens.InvitationTokenGenerator"

    def check_token(self, user, token) -> bool:
        """Django's check with the invitation's own timeout instead of PASSWORD_RESET_TIMEOUT."""
        if not (user and token):
            return False
        try:
            ts_b36, _ = token.split("-")
            ts = base36_to_int(ts_b36)
        except ValueError:
            return False
        for secret in [self.secret, *self.secret_fallbacks]:
            if constant_time_compare(self._make_token_with_timestamp(user, ts, secret), token):
                break
        else:
            return False
        return (self._num_seconds(self._now()) - ts) <= invitation_timeout()


invitation_token_generator = InvitationTokenGenerator()
