"""The phone checks on "Finish and sign" the same form flags the server raises, with the server's words.

``inspections.flags`` names every flag once; the sync (``services/sync*.py``) may raise no other, and the phone's
checker (``formcheck.js``) must know every flag the server lists as checkable from the form alone.
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
from pathlib import Path
from types import SimpleNamespace as NS

import pytest
import time_machine

from inspections import flags, phone
from inspections.selectors import checklist_for
from inspections.services import inspection_sync
from tests.conftest import service_missing
from tests.factories.inspections import sync_form
from tests.flows.test_work_order_record import DESIGN_FLOW, filled_readings
from tests.frontend import findings_world, scenario
from tests.frontend.scenario import make_work

ROOT = Path(__file__).resolve().parents[2]
JS = ROOT / "frontend" / "static" / "frontend" / "js"

RUNNER = """
import { readFileSync } from "node:fs";
import { FORM_FLAG_CHECKS, formFlags } from "./formcheck.js";
const { ctx, answers } = JSON.parse(readFileSync(process.argv[2], "utf8"));
const problems = formFlags(ctx, new Map(Object.entries(answers)));
console.log(JSON.stringify({ known: Object.keys(FORM_FLAG_CHECKS), problems }));
"""


def _run(tmp_path, ctx, answers):
    if shutil.which("node") is None:
        service_missing("needs Node.js (apt-get install nodejs) to run the phone's form checks")
    shutil.copy(JS / "formcheck.js", tmp_path / "formcheck.js")
    (tmp_path / "run.mjs").write_text(RUNNER)
    (tmp_path / "in.json").write_text(json.dumps({"ctx": ctx, "answers": answers}))
    out = subprocess.run(
        ["node", "run.mjs", "in.json"], cwd=tmp_path, capture_output=True, text=True, timeout=30, check=False
    )
    assert out.returncode == 0, out.stderr
    return json.loads(out.stdout)


def _slot(key, label, *, kind="check", component=None, required=False, photo=False, title="Filter check"):
    item = NS(
        api_key=key,
        kind=kind,
        label=label,
        required=required,
        photo_required_when_not_ok=photo,
    )
    comp = NS(label_code=component, name=f"Bank {component}") if component else None
    return NS(item=item, component=comp, template=NS(title=title))


def test_every_flag_the_sync_raises_is_named_in_one_list():
    """A flag code in the sync's modules (services/sync*.py: the store and its flags) that inspections.flags does not
    name fails here (the phone would not know it)."""
    raised: set[str] = set()
    for path in sorted((ROOT / "inspections" / "services").glob("sync*.py")):
        source = path.read_text()
        raised |= set(re.findall(r'"code":\s*"(\w+)"', source)) | set(re.findall(r'flag_for\(\s*"(\w+)"', source))
    assert raised, "the scan found no flag codes: the pattern no longer matches services/sync*.py"
    named = set(flags.FORM_FLAGS) | set(flags.SERVER_FLAGS)
    assert raised <= named, f"flags raised but not named in inspections.flags: {sorted(raised - named)}"
    assert not set(flags.FORM_FLAGS) & set(flags.SERVER_FLAGS)


def test_the_phone_knows_every_form_flag_and_words_it_as_the_server(tmp_path):
    """Two required items unanswered, a failed reading with neither note nor photo: the phone's flags read word for
    word as the server's (inspections.flags), and its checker knows every code of FORM_FLAGS."""
    slots = [
        _slot("filter_check.dp", "Pressure drop", kind="number", component="F1", required=True),
        _slot("filter_check.condition", "Media condition", required=True, photo=True),
        _slot("filter_check.photo", "Photo of the bank", kind="photo", required=True),
        _slot("visit.notes", "Notes", kind="text"),
    ]
    ctx = phone.form_flags_context(slots=slots)
    answers = {
        "filter_check.dp|F1": {"answered": True, "verdict": "fail", "note": " ", "photographed": False},
        "filter_check.condition|": {"answered": False},
        "filter_check.photo|": {"answered": False, "photographed": False},
    }
    out = _run(tmp_path, ctx, answers)
    assert set(out["known"]) == set(flags.FORM_FLAGS)
    expected = [
        flags.flag_incomplete([flags.slot_place(slots[1]), flags.slot_place(slots[2])]),
        flags.flag_for("missing_note", label=flags.slot_label(slots[0])),
    ]
    assert [{"code": p["code"], "reason": p["text"]} for p in out["problems"]] == expected
    assert expected[0]["reason"] == (
        "required items not answered: Filter check › Media condition; Filter check › Photo of the bank"
    )
    assert expected[1]["reason"] == "Pressure drop (Bank F1) failed without a note saying what was found"


def test_every_fail_without_a_note_is_flagged_on_the_phone_and_the_server_alike(tmp_path):
    """The phone asks "say what you found in the note" beside every fail: a fail with no note is flagged, on every
    item (no item says whether it wants one; DESIGN.md is silent; the supervisor sees "failed without a note"); a
    fail with a note, and an ok without one, are not."""
    slots = [
        _slot("belt.tension", "Belt tension"),
        _slot("belt.wear", "Belt wear"),
        _slot("belt.guard", "Belt guard"),
    ]
    ctx = phone.form_flags_context(slots=slots)
    answers = {
        "belt.tension|": {"answered": True, "verdict": "fail", "note": ""},
        "belt.wear|": {"answered": True, "verdict": "fail", "note": "frayed edge"},
        "belt.guard|": {"answered": True, "verdict": "ok", "note": ""},
    }
    out = _run(tmp_path, ctx, answers)
    assert [p["text"] for p in out["problems"]] == ["Belt tension failed without a note saying what was found"]


def test_a_rule_the_phone_does_not_know_is_said_not_skipped(tmp_path):
    """A flag the server ships that formcheck.js lacks shows as a problem, never passes silently."""
    ctx = phone.form_flags_context(slots=[])
    ctx["form_flags"]["missing_signature_photo"] = "{label} has no photo of the signature"
    out = _run(tmp_path, ctx, {})
    assert len(out["problems"]) == 1
    assert "does not know" in out["problems"][0]["text"]
    assert "missing_signature_photo" not in out["problems"][0]["text"]


@pytest.mark.django_db
def test_the_server_flags_a_fail_without_a_note_and_not_one_with_a_note():
    """A filter check whose final filters read 400 Pa against a final 250 Pa (factory specs, common practice;
    tests/frontend/findings_world.py) fails that reading: sent without a note the form is flagged "… failed without
    a note saying what was found"; the same with a note is not flagged for it."""
    with time_machine.travel(findings_world.FIRST_VISIT, tick=False):
        s = scenario.build()
        results = []
        for note in ("", "media torn at the frame, dust past the bank"):
            wo = make_work(
                ahu=s.unit_a, assignee=s.technician, title="Filter check", due=findings_world.FIRST_VISIT.date()
            )
            readings = filled_readings(
                checklist_for(work_order=wo, user=s.technician), {**DESIGN_FLOW, "filter_check.dp": 400}
            )
            for r in readings:
                if r["item"] == "filter_check.dp":
                    r["note"] = note
            results += inspection_sync(
                user=s.technician, forms=[sync_form(wo, readings, finished_at=findings_world.FIRST_VISIT)]
            )
    bare, noted = results
    missing = [f["reason"] for f in bare.get("flags", []) if f["code"] == "missing_note"]
    assert len(missing) == 1 and missing[0].endswith("failed without a note saying what was found"), bare
    assert not [f for f in noted.get("flags", []) if f["code"] == "missing_note"], noted


@pytest.mark.django_db
def test_the_phone_is_served_no_per_item_note_rule(api_client):
    """A note is asked on every fail (above), so no item carries a rule of its own about notes: the checklist the
    phone downloads and its "Finish and sign" checks hold the required and photo rules only, nothing a reader could
    take for "this item needs no note"."""
    from inspections.models import ChecklistItem

    with time_machine.travel(findings_world.FIRST_VISIT, tick=False):
        s = scenario.build()
        wo = make_work(ahu=s.unit_a, assignee=s.technician, title="Filter check", due=findings_world.FIRST_VISIT.date())
        api_client.force_authenticate(s.technician)
        doc = api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()
    items = [i for t in doc["templates"] for i in t["items"]]
    assert items and all("photo_required_when_not_ok" in i for i in items)
    assert not [i["key"] for i in items if "note_required_when_not_ok" in i]
    slots = phone.form_flags_context(slots=[_slot("belt.tension", "Belt tension")])["form_slots"]
    assert slots and not [slot for slot in slots if "note_required_when_not_ok" in slot]
    assert "note_required_when_not_ok" not in {f.name for f in ChecklistItem._meta.get_fields()}
