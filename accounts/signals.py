"""What accounts announces to the apps above it.

DESIGN's arrows let every app import accounts, never the reverse, so a changed password tells
the apps that keep their own secrets for a person (the calendar feed in scheduling) through this
signal, sent inside the saving transaction; each receiver revokes what it keeps.
"""

from django.dispatch import Signal

# Sent by ``services.user_credentials_revoke`` after a saved password change, with ``user``.
password_changed = Signal()
