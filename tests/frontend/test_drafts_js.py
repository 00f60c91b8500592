"""The phone's drafts (frontend/static/frontend/js/drafts.js) under Node, with an in-memory IndexedDB stand-in.

A draft is kept per person and work order: another person signed in on the same
phone reads no draft of the first person's, nor one of another work order;
saving again replaces the draft; dropping removes only that person's; nothing is
kept when nobody is signed in. ``debounce`` runs the save once typing pauses,
and ``flush`` runs a pending save at once (leaving the page, finishing the form).
"""

import json
import shutil
import subprocess
from pathlib import Path

import pytest

from tests.conftest import service_missing

JS = Path(__file__).resolve().parents[2] / "frontend" / "static" / "frontend" / "js"

FAKE_OUTBOX = """
const drafts = new Map();
export const draftPut = async (d) => { drafts.set(d.key, structuredClone(d)); };
export const draftGet = async (k) => drafts.get(k);
export const draftDelete = async (k) => { drafts.delete(k); };
export const _drafts = drafts;
"""

RUNNER = """
import { debounce, dropDraft, loadDraft, saveDraft } from "./drafts.js";
import { _drafts } from "./outbox.js";
const out = {};
const at = new Date("2026-03-03T10:00:00Z");
await saveDraft("tess", "wo-1", [["r:visit.run_hours:-", "1234"], ["c:fan:-", "ok", true]], at);
await saveDraft("tess", "wo-2", [["r:visit.run_hours:-", "99"]], at);
await saveDraft("", "wo-1", [["r:visit.run_hours:-", "7"]], at);
out.tess = await loadDraft("tess", "wo-1");
out.ola = await loadDraft("ola", "wo-1");
out.nobody = await loadDraft("", "wo-1");
await saveDraft("tess", "wo-1", [["r:visit.run_hours:-", "1235"]], at);
out.replaced = (await loadDraft("tess", "wo-1")).fields;
await saveDraft("ola", "wo-1", [["r:visit.run_hours:-", "5"]], at);
await dropDraft("tess", "wo-1");
out.after_drop = { tess: await loadDraft("tess", "wo-1"), ola: (await loadDraft("ola", "wo-1")).fields,
                   tess2: (await loadDraft("tess", "wo-2")).fields };
out.keys = [..._drafts.keys()].sort();
const calls = [];
const later = debounce((x) => calls.push(x), 30);
later(1); later(2); later(3);
await new Promise((resolve) => setTimeout(resolve, 80));
out.debounced = [...calls];
later(4); later.flush(); later.flush();
out.flushed = [...calls];
console.log(JSON.stringify(out));
"""


@pytest.fixture
def drafts_run(tmp_path):
    if shutil.which("node") is None:
        service_missing("needs Node.js (apt-get install nodejs) to run the phone's drafts module")
    shutil.copy(JS / "drafts.js", tmp_path / "drafts.js")
    (tmp_path / "outbox.js").write_text(FAKE_OUTBOX)
    (tmp_path / "run.js").write_text(RUNNER)
    (tmp_path / "package.json").write_text('{"type": "module"}')
    out = subprocess.run(["node", "run.js"], cwd=tmp_path, capture_output=True, text=True, timeout=30, check=False)
    assert out.returncode == 0, out.stderr
    return json.loads(out.stdout)


def test_a_draft_is_read_back_only_by_its_person_for_its_work_order(drafts_run):
    """Tess's draft comes back to Tess with its fields and time; Ola and nobody-signed-in get none."""
    tess = drafts_run["tess"]
    assert tess["fields"] == [["r:visit.run_hours:-", "1234"], ["c:fan:-", "ok", True]]
    assert tess["owner"] == "tess" and tess["work_order"] == "wo-1"
    assert tess["saved_at"] == "2026-03-03T10:00:00.000Z"
    assert drafts_run["ola"] is None and drafts_run["nobody"] is None


def test_saving_replaces_and_dropping_removes_only_that_persons_draft(drafts_run):
    """A second save replaces the first; dropping Tess's wo-1 draft leaves Ola's and Tess's other work order."""
    assert drafts_run["replaced"] == [["r:visit.run_hours:-", "1235"]]
    assert drafts_run["after_drop"] == {
        "tess": None,
        "ola": [["r:visit.run_hours:-", "5"]],
        "tess2": [["r:visit.run_hours:-", "99"]],
    }
    assert drafts_run["keys"] == ["ola|wo-1", "tess|wo-2"]


def test_debounce_saves_once_typing_pauses_and_flush_saves_at_once(drafts_run):
    """Three quick keystrokes save once (the last value); flush saves a pending value now, and only once."""
    assert drafts_run["debounced"] == [3]
    assert drafts_run["flushed"] == [3, 4]
