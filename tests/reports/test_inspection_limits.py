"""The inspection report's "Limit" column names the band(s) each verdict was judged against, as its reason does.

A visit with every check (the plain-words visit: the server's own judgements of generated forms) and band checks
on single readings at each verdict: wherever a reason says a reading is within, outside, above or below a band,
that band is in the row's limit, in the reader's units; an outdoor-air row judged against the space's requirement
names the requirement beside the unit's design minimum.
"""

from __future__ import annotations

import random
import re

import pytest

from inspections.services.findings import evaluations_store
from reports.documents.visit_record import visit_records
from tests.inspections.test_phone_agreement import FOCUS, evaluate_case, make_case

from . import builders as b
from .test_plain_words import visit  # noqa: F401 — the shared fixture

pytestmark = pytest.mark.django_db

# A band as a reason names it: "outside −7.0 to −3.0 °C", "within 2.0–6.0 °C", "above 6.7 A", "at most 30 s".
# A bare count ("a forecast needs at least 3") is no band: a band's number carries its unit.
BAND = re.compile(
    r"\b(?:outside|within|above|below|at most|at least) (−?[\d.,]+(?:(?:–| to )−?[\d.,]+)?)(?= ?[^\s\d;,.)])"
)


@pytest.fixture
def banded(visit):  # noqa: F811 — the imported fixture
    """The plain-words visit plus single readings judged against their bands, one of each item and verdict."""
    rng = random.Random(20261202)
    pool = [r for focus in FOCUS for _ in range(40) for r in evaluate_case(make_case(rng, focus))]
    insp = visit["insp"]
    by_kind = {}
    for comp in visit["wo"].ahu.components.order_by("position", "pk"):
        by_kind.setdefault(comp.kind, comp)
    # Per item and part one reading, a watch where one was generated (its reason names both bands), else a fail.
    rank = {"watch": 0, "fail": 1, "ok": 2}
    chosen: dict = {}
    for r in pool:
        component = by_kind.get(r.component.kind) if r.component is not None else None
        if r.check != "limits" or (r.component is not None and component is None):
            continue
        key = (r.item, getattr(component, "pk", None))
        if key not in chosen or rank[r.verdict] < rank[chosen[key][0].verdict]:
            chosen[key] = (r, component)
    results = []
    for r, component in chosen.values():
        r.component = component
        b.reading(insp, r.item, component=component, value_si=r.derived["value"], verdict=r.verdict)
        results.append(r)
    assert "watch" in {r.verdict for r in results}, "no generated band check at watch"
    evaluations_store(inspection=insp, results=results)
    return visit


@pytest.mark.parametrize("system", ["si", "us"])
def test_every_limit_names_the_band_its_reason_names(banded, system):
    """Each row's limit holds every band its reason judges against, in the reader's units."""
    visits, _components, _cautions = visit_records(
        work_order=banded["wo"], system=system, photo_src=lambda ph: "", signature_src=lambda insp: ""
    )
    rows = [row for group in visits[0]["parts"] for row in group["rows"]]
    checked = 0
    for row in rows:
        reason = row["reason"]
        for band in BAND.findall(reason):
            assert band in row["limit"], (row["check"], row["limit"], reason)
            checked += 1
        if need := re.search(r"the space needs .*? = (\d+) % of the supply air", reason):
            assert f"space needs {need.group(1)} %" in row["limit"], (row["check"], row["limit"], reason)
            checked += 1
        if more := re.search(r"the space needs, (.+?) for .*?: more than the ", reason):
            # A requirement above the supply airflow is named as an airflow, never "100 %".
            assert f"space needs {more.group(1)}, more than the supply airflow" in row["limit"], (row["limit"], reason)
            checked += 1
        if design := re.search(r"the unit's design minimum (\d+) %", reason):
            assert f"design minimum {design.group(1)} %" in row["limit"], (row["check"], row["limit"], reason)
    assert checked >= 3


def test_a_band_check_shows_its_ok_and_watch_bands(banded):
    """A reading judged watch or fail against a two-band limit shows both bands ("ok …; watch …")."""
    visits, _components, _cautions = visit_records(
        work_order=banded["wo"], system="si", photo_src=lambda ph: "", signature_src=lambda insp: ""
    )
    rows = [
        row
        for group in visits[0]["parts"]
        for row in group["rows"]
        if " outside " in f" {row['reason']}" or " the recommended " in row["reason"]
    ]
    assert rows
    assert all(
        row["limit"].startswith("ok ") and "; watch " in row["limit"]
        for row in rows
        if "but" in row["reason"] or " the recommended " in row["reason"]
    )
    # A frost thermostat's trip is watched below its band down to the failure and above it however high.
    trip = [row for row in rows if row["reason"].startswith("freeze-protection trip temperature")]
    assert trip and all(row["limit"].endswith("; watch at least 2.0 °C") for row in trip), trip
