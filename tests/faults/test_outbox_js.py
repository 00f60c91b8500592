"""The phone's outbox keeps a form unless the server answered that it holds it.

``frontend/static/frontend/js/sync.js`` runs under Node with an in-memory
stand-in for its IndexedDB module and a scripted ``fetch``: a 503 from the
server, a dropped connection, a refused form, an unknown per-form answer and a
missing answer all leave the form in the outbox; only ``stored``, ``flagged``
and ``duplicate`` remove it. A refused form never holds back the forms after it:
a body refused whole (400/413) is sent again form by form, and the one the
server refuses stays marked with its errors. Every batch carries the phone's
clock (``sent_at``). On a shared phone only the signed-in person's forms are
sent (each form carries its owner), and only while the session is still theirs.
"""

import json
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from tests.conftest import service_missing

JS = Path(__file__).resolve().parents[2] / "frontend" / "static" / "frontend" / "js"

FAKE_OUTBOX = """
const stores = { outbox: new Map(), results: new Map(), meta: new Map(), drafts: new Map() };
export const outboxPut = async (f) => { stores.outbox.set(f.client_uuid, f); };
export const outboxAll = async () => [...stores.outbox.values()];
export const outboxGet = async (u) => stores.outbox.get(u);
export const outboxDelete = async (u) => { stores.outbox.delete(u); };
export const resultPut = async (r) => { stores.results.set(r.client_uuid, r); };
export const resultAll = async () => [...stores.results.values()];
export const metaGet = async (k) => stores.meta.get(k);
export const metaSet = async (k, v) => { stores.meta.set(k, v); };
export const draftPut = async (d) => { stores.drafts.set(d.key, d); };
export const draftGet = async (k) => stores.drafts.get(k);
export const draftDelete = async (k) => { stores.drafts.delete(k); };
export const newUuid = () => "x";
export const _stores = stores;
"""

RUNNER = """
import { syncOutbox } from "./sync.js";
import { _stores, outboxPut } from "./outbox.js";

const scenario = JSON.parse(process.argv[2]);
const person = scenario.person ?? "tess";
globalThis.document = { body: { dataset: { person, personUrl: "/person/" } }, cookie: "", dispatchEvent() {} };
globalThis.CustomEvent = class { constructor(name) { this.name = name; } };
Object.defineProperty(globalThis, "navigator", { value: { onLine: true }, configurable: true });

const posts = [];
globalThis.fetch = async (url, init) => {
  if (scenario.network_error) throw new TypeError("Failed to fetch");
  if (url === "/person/") {
    // Who the session is now: by default the page's own person.
    const payload = { person: scenario.session_person ?? person };
    return { ok: true, status: 200, statusText: "OK", json: async () => payload };
  }
  const body = JSON.parse(init.body);
  posts.push({ sent_at: body.sent_at, forms: body.forms.map((f) => f.client_uuid) });
  if (scenario.body_refused_with) {
    // The server refuses any body holding this form whole (e.g. too big): 4xx in the error shape.
    const bad = body.forms.some((f) => f.client_uuid === scenario.body_refused_with);
    if (bad) {
      const payload = { detail: "The request is too large", errors: {} };
      return { ok: false, status: 413, statusText: "x", json: async () => payload };
    }
  }
  const index = (f) => Number(f.client_uuid.split("-")[1]);
  const results = body.forms.map((f) => scenario.answers[index(f)] === null ? null
    : { client_uuid: f.client_uuid, status: scenario.answers[index(f)],
        errors: scenario.answers[index(f)] === "refused" ? { "readings[1].note": ["Note: remove the NUL"] } : {} })
    .filter(Boolean);
  const payload = scenario.http === 200 ? { results } : { detail: "The database could not store this just now" };
  return { ok: scenario.http < 300, status: scenario.http, statusText: "x", json: async () => payload };
};

for (const [i, _] of scenario.answers.entries()) {
  // owners[i]: whose form it is (undefined: a form saved before forms carried an owner).
  const owner = (scenario.owners || [])[i];
  const form = { client_uuid: `form-${i}`, work_order: "w" };
  await outboxPut({ client_uuid: `form-${i}`, owner, state: "waiting", form });
}
for (const key of scenario.drafts || []) _stores.drafts.set(key, { key, owner: key.split("|")[0], work_order: "w" });
await syncOutbox({ url: "/api/inspections/sync/" });
console.log(JSON.stringify({
  drafts: [..._stores.drafts.keys()].sort(),
  kept: [..._stores.outbox.keys()].sort(),
  states: Object.fromEntries([..._stores.outbox.values()].map((f) => [f.client_uuid, f.state])),
  errors: Object.fromEntries([..._stores.outbox.values()].map((f) => [f.client_uuid, f.errors || null])),
  error: _stores.meta.get(`last_error:${person}`) || "",
  owners: Object.fromEntries([..._stores.outbox.values()].map((f) => [f.client_uuid, f.owner ?? null])),
  result_owners: Object.fromEntries([..._stores.results.values()].map((r) => [r.client_uuid, r.owner ?? null])),
  posts,
}));
"""


@pytest.fixture
def run_sync(tmp_path):
    node = shutil.which("node")
    if node is None:
        service_missing("needs Node.js (apt-get install nodejs) to run the phone's sync module")
    shutil.copy(JS / "sync.js", tmp_path / "sync.js")
    shutil.copy(JS / "drafts.js", tmp_path / "drafts.js")
    (tmp_path / "outbox.js").write_text(FAKE_OUTBOX)
    (tmp_path / "run.js").write_text(RUNNER)
    (tmp_path / "package.json").write_text('{"type": "module"}')

    def run(**scenario) -> dict:
        scenario.setdefault("http", 200)
        scenario.setdefault("network_error", False)
        out = subprocess.run(
            [node, "run.js", json.dumps(scenario)], cwd=tmp_path, capture_output=True, text=True, timeout=30
        )
        assert out.returncode == 0, out.stderr
        return json.loads(out.stdout.strip().splitlines()[-1])

    return run


def test_stored_flagged_and_duplicate_leave_the_outbox(run_sync):
    """The three answers that mean "the server has it" remove the form."""
    assert run_sync(answers=["stored", "flagged", "duplicate"])["kept"] == []


def test_a_database_outage_keeps_every_form(run_sync):
    """A 503 for the batch keeps all forms and shows the server's message."""
    res = run_sync(http=503, answers=["stored", "stored"])
    assert res["kept"] == ["form-0", "form-1"]
    assert "database" in res["error"]


def test_a_dropped_connection_keeps_every_form(run_sync):
    res = run_sync(network_error=True, answers=["stored"])
    assert res["kept"] == ["form-0"]


def test_refused_unknown_and_missing_answers_keep_the_form(run_sync):
    """Refused is kept for the technician to fix; an unknown status or no answer at all is kept to resend."""
    res = run_sync(answers=["stored", "refused", "error", None])
    assert res["kept"] == ["form-1", "form-2", "form-3"]
    assert res["states"]["form-1"] == "refused"
    assert res["states"]["form-2"] == "waiting"


def test_a_refused_form_in_the_middle_holds_back_nothing(run_sync):
    """Three forms, the middle one refused: the other two leave the outbox, the refused one stays with its errors."""
    res = run_sync(answers=["stored", "refused", "stored"])
    assert res["kept"] == ["form-1"]
    assert res["states"]["form-1"] == "refused"
    assert res["errors"]["form-1"] == {"readings[1].note": ["Note: remove the NUL"]}


def test_a_body_refused_whole_is_sent_again_form_by_form(run_sync):
    """A 413 for the batch (one form too big): each form is sent alone; only that form stays, marked refused."""
    res = run_sync(answers=["stored", "stored", "stored"], body_refused_with="form-1")
    assert res["kept"] == ["form-1"]
    assert res["states"]["form-1"] == "refused"
    assert res["errors"]["form-1"] == {"form": ["The request is too large"]}
    assert [p["forms"] for p in res["posts"]] == [["form-0", "form-1", "form-2"], ["form-0"], ["form-1"], ["form-2"]]
    assert res["error"] == ""


def test_every_batch_carries_the_phones_clock(run_sync):
    """sent_at: the phone's clock when sending, ISO 8601 with offset, so the server can measure the skew."""
    res = run_sync(answers=["stored"])
    [post] = res["posts"]
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z", post["sent_at"])


def test_only_the_signed_in_persons_forms_are_sent(run_sync):
    """A shared phone: Ann's form stays in the outbox untouched while Ben is signed in; Ben's goes, his result his."""
    res = run_sync(answers=["stored", "stored"], owners=["ann", "ben"], person="ben")
    assert [p["forms"] for p in res["posts"]] == [["form-1"]]
    assert res["kept"] == ["form-0"]
    assert res["owners"]["form-0"] == "ann"
    assert res["states"]["form-0"] == "waiting"
    assert res["result_owners"] == {"form-1": "ben"}


def test_the_owner_signed_in_again_sends_their_form(run_sync):
    """Ann signs in again on the same phone: her form waiting since her last session is sent."""
    res = run_sync(answers=["stored"], owners=["ann"], person="ann")
    assert [p["forms"] for p in res["posts"]] == [["form-0"]]
    assert res["kept"] == []


def test_nothing_is_sent_when_the_session_is_someone_else(run_sync):
    """A page still open for Ann while Ben signed in from another window: nothing goes, the form stays Ann's."""
    res = run_sync(answers=["stored"], owners=["ann"], person="ann", session_person="ben")
    assert res["posts"] == []
    assert res["kept"] == ["form-0"]
    assert "someone else is signed in" in res["error"]


def test_nothing_is_sent_when_nobody_is_signed_in(run_sync):
    """No person on the page (signed out): no form is sent and none is adopted."""
    res = run_sync(answers=["stored"], owners=["ann"], person="")
    assert res["posts"] == []
    assert res["kept"] == ["form-0"]


def test_a_form_saved_before_owners_goes_to_the_first_person_signed_in(run_sync):
    """A form from before forms carried an owner is adopted by the person signed in and sent under their session."""
    res = run_sync(answers=["stored"], person="ann")
    assert [p["forms"] for p in res["posts"]] == [["form-0"]]
    assert res["result_owners"] == {"form-0": "ann"}


def test_a_draft_goes_only_when_the_server_holds_its_form(run_sync):
    """The typed draft of a work order is deleted when the server stores the form, kept when it refuses it,
    and another person's draft of the same work order is never touched."""
    kept = run_sync(answers=["refused"], owners=["tess"], drafts=["tess|w", "ola|w"])
    assert kept["drafts"] == ["ola|w", "tess|w"]
    stored = run_sync(answers=["stored"], owners=["tess"], drafts=["tess|w", "ola|w"])
    assert stored["drafts"] == ["ola|w"]
