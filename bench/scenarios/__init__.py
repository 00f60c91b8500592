"""The benchmark scenarios. Each returns a dict of figures or raises ``NotRun`` naming what is missing.

Every scenario measures its baseline in the same process, on the same
database, right beside the measured operation, so noise on a shared machine
affects both. Figures are medians over ``runs``.

One module per scenario: ``work_orders`` (generation; the technicians' day of work), ``endpoints`` (today and
board under load), ``sync`` (forms stored and replayed), ``documents`` (PDFs, the PWA shell), ``registry``
(the CSV import); what they share in ``common``.
"""

from __future__ import annotations

from .common import NotRun, WrongOutcome, connection_vendor, median, timed, url
from .documents import pwa_shell, reports_render
from .endpoints import endpoints_under_load
from .registry import registry_import
from .sync import SIGNATURE_PNG, forms_outcome_check, sync_forms, sync_forms_prepare
from .work_orders import today_work_assign, work_order_generation

__all__ = [
    "SIGNATURE_PNG",
    "NotRun",
    "WrongOutcome",
    "connection_vendor",
    "endpoints_under_load",
    "forms_outcome_check",
    "median",
    "pwa_shell",
    "registry_import",
    "reports_render",
    "sync_forms",
    "sync_forms_prepare",
    "timed",
    "today_work_assign",
    "url",
    "work_order_generation",
]
