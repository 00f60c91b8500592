"""The phone's outbox keeps a form unless the server answered that it holds it.

``frontend/static/frontend/js/sync.js`` runs under Node with an in-memory
stand-in for its IndexedDB module and a scripted ``fetch``: a 503 from the
server, a dropped connection, a refused form, an unknown per-form answer and a
missing answer all leave the form in the outbox; only ``stored``, ``flagged``
and ``duplicate`` remove it.
"""

import json
import shutil
import subprocess
from pathlib import Path

import pytest

from tests.conftest import service_missing

JS = Path(__file__).resolve().parents[2] / "frontend" / "static" / "frontend" / "js"

FAKE_OUTBOX = """
const stores = { outbox: new Map(), results: new Map(), meta: new Map() };
export const outboxPut = async (f) => { stores.outbox.set(f.client_uuid, f); };
export const outboxAll = async () => [...stores.outbox.values()];
export const outboxGet = async (u) => stores.outbox.get(u);
export const outboxDelete = async (u) => { stores.outbox.delete(u); };
export const resultPut = async (r) => { stores.results.set(r.client_uuid, r); };
export const resultAll = async () => [...stores.results.values()];
export const metaGet = async (k) => stores.meta.get(k);
export const metaSet = async (k, v) => { stores.meta.set(k, v); };
export const newUuid = () => "x";
export const _stores = stores;
"""

RUNNER = """
import { syncOutbox } from "./sync.js";
import { _stores, outboxPut } from "./outbox.js";

globalThis.document = { body: { dataset: {} }, cookie: "", dispatchEvent() {} };
globalThis.CustomEvent = class { constructor(name) { this.name = name; } };
Object.defineProperty(globalThis, "navigator", { value: { onLine: true }, configurable: true });

const scenario = JSON.parse(process.argv[2]);
globalThis.fetch = async (url, init) => {
  if (scenario.network_error) throw new TypeError("Failed to fetch");
  const body = JSON.parse(init.body);
  const results = body.forms.map((f, i) => scenario.answers[i] === null ? null
    : { client_uuid: f.client_uuid, status: scenario.answers[i], errors: {} }).filter(Boolean);
  const payload = scenario.http === 200 ? { results } : { detail: "The database could not store this just now" };
  return { ok: scenario.http < 300, status: scenario.http, statusText: "x", json: async () => payload };
};

for (const [i, _] of scenario.answers.entries()) {
  await outboxPut({ client_uuid: `form-${i}`, state: "waiting", form: { client_uuid: `form-${i}`, work_order: "w" } });
}
await syncOutbox({ url: "/api/inspections/sync/" });
console.log(JSON.stringify({
  kept: [..._stores.outbox.keys()].sort(),
  states: Object.fromEntries([..._stores.outbox.values()].map((f) => [f.client_uuid, f.state])),
  error: _stores.meta.get("last_error") || "",
}));
"""


@pytest.fixture
def run_sync(tmp_path):
    node = shutil.which("node")
    if node is None:
        service_missing("needs Node.js (apt-get install nodejs) to run the phone's sync module")
    shutil.copy(JS / "sync.js", tmp_path / "sync.js")
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
