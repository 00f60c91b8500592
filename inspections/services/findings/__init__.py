"""Findings: one open finding per unit, part and problem gathers every failure of it; done work closes it.

A finding closes when its corrective work order is completed (at the completion time; sent back for
rework, it opens again), when an amendment corrects the readings so that its check passes, when a later
visit judges the same check on the same part ok, or (a filter finding) when that bank's filters are replaced.
A failure after it closed opens a new finding. Corrective work still awaiting approval whose findings are all
closed is withdrawn.

Findings of other sources take the same path (``finding_observe_source``): the building-automation trends raise
one finding per unit, part and fault rule through ``automation.fault_findings``, closed with their fault
(``finding_close_source``: absent for the set time, or its corrective work completed).

The package answers with its public names (``from inspections.services.findings import findings_open``):
``problems`` (what a failure is, in words), ``record`` (one finding's row), ``opening`` (a form's failures),
``closing``, ``corrective`` (the work for findings) and ``sources`` (the trends' findings).
"""

from .closing import (
    NOT_RESOLVED_BY_LATER_OK,
    banks_replaced,
    findings_close_cleared,
    findings_close_corrected,
    findings_reopen_for_rework,
    findings_resolve,
    work_order_moved,
)
from .corrective import DESIGN_REVIEW_WITHDRAWN, RESOLVED_WITHDRAWN, finding_work_order_attach
from .opening import findings_open
from .problems import (
    CHECK_TITLES,
    CONDITION_TITLES,
    DESIGN_REVIEW_TITLE,
    FILTER_BYPASS_TITLE,
    FREEZE_LEAD_DAYS,
    KNOWN_CONDITIONS,
    PRIORITY,
    TITLE_MAX,
    design_shortfall,
    freeze_season_near,
    is_design_review,
    problem_of,
    severity_of,
)
from .record import evaluations_store
from .sources import SourceSeen, finding_close_source, finding_observe_source, source_problem

__all__ = [
    "CHECK_TITLES",
    "CONDITION_TITLES",
    "DESIGN_REVIEW_TITLE",
    "DESIGN_REVIEW_WITHDRAWN",
    "FILTER_BYPASS_TITLE",
    "FREEZE_LEAD_DAYS",
    "KNOWN_CONDITIONS",
    "NOT_RESOLVED_BY_LATER_OK",
    "PRIORITY",
    "RESOLVED_WITHDRAWN",
    "TITLE_MAX",
    "SourceSeen",
    "banks_replaced",
    "design_shortfall",
    "evaluations_store",
    "finding_close_source",
    "finding_observe_source",
    "finding_work_order_attach",
    "findings_close_cleared",
    "findings_close_corrected",
    "findings_open",
    "findings_reopen_for_rework",
    "findings_resolve",
    "freeze_season_near",
    "is_design_review",
    "problem_of",
    "severity_of",
    "source_problem",
    "work_order_moved",
]
