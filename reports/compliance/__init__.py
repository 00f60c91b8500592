"""Compliance figures: the one place they are computed. Screens, APIs and PDFs read them from here.

All dates are the site's local dates; ``as_of`` is the moment the figures are taken, for a report its
requested time; "the date of ``as_of``" is each site's today then, ``inventory.today.today_for``, and for
several sites together the latest of them, ``report_today``.

One module per figure, each stating its rules: ``preventive`` (each due task occurrence on time, late,
missed, not yet due or cancelled, and the on-time share per category), ``findings`` (open findings by
severity and age, and each one's problem and corrective work in words), ``filter_status`` (each bank's
latest judged filter point), ``outlook`` (when a bank's filters are to be changed: ``filter_outlook``),
``freeze_readiness`` (the units' freeze-protection readiness, counted) and ``figures`` (all of them for
some sites in one pass, ``compliance_figures``, with the overdue work orders). The package answers with
their public names.
"""

from __future__ import annotations

from .figures import ComplianceFigures, compliance_figures, report_today
from .filter_status import FILTER_AFTER_CHANGE, FILTER_CHECK, NEW_FILTERS_FORECAST, bank_filter_status
from .findings import AGE_BUCKETS, SEVERITIES, WHOLE_UNIT, age_bucket, corrective_work_words, finding_problem
from .freeze_readiness import (
    FREEZE_DUE,
    FREEZE_LABELS,
    FREEZE_LATE,
    FREEZE_NOT_READY,
    FREEZE_READY,
    FREEZE_UNKNOWN,
)
from .outlook import (
    NO_DATE_NOT_RISING,
    NO_FORECAST_YET,
    FilterOutlook,
    filter_forecast_text,
    filter_outlook,
    stored_filter_outlook,
)
from .preventive import (
    CANCELLED,
    LATE,
    MISSED,
    NOT_YET_DUE,
    ON_TIME,
    OUTCOMES,
    CategoryFigures,
    Occurrence,
    occurrence_outcome,
    preventive_figures,
)

__all__ = [
    "AGE_BUCKETS",
    "CANCELLED",
    "FILTER_AFTER_CHANGE",
    "FILTER_CHECK",
    "FREEZE_DUE",
    "FREEZE_LABELS",
    "FREEZE_LATE",
    "FREEZE_NOT_READY",
    "FREEZE_READY",
    "FREEZE_UNKNOWN",
    "LATE",
    "MISSED",
    "NEW_FILTERS_FORECAST",
    "NOT_YET_DUE",
    "NO_DATE_NOT_RISING",
    "NO_FORECAST_YET",
    "ON_TIME",
    "OUTCOMES",
    "SEVERITIES",
    "WHOLE_UNIT",
    "CategoryFigures",
    "ComplianceFigures",
    "FilterOutlook",
    "Occurrence",
    "age_bucket",
    "bank_filter_status",
    "compliance_figures",
    "corrective_work_words",
    "filter_forecast_text",
    "filter_outlook",
    "finding_problem",
    "occurrence_outcome",
    "preventive_figures",
    "report_today",
    "stored_filter_outlook",
]
