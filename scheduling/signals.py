"""What scheduling announces to the apps above it.

DESIGN's arrows let inspections import scheduling, never the reverse, so a work
order's life cycle tells inspections about a state change through this signal
(sent inside the change's transaction); the receiver calls a service there.
"""

from django.dispatch import Signal

# Sent by ``services.work_order_transition`` after every move, with
# ``work_order`` (saved, in its new state), ``before`` (the old state) and ``by``.
work_order_moved = Signal()
