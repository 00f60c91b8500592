"""A number outside what its item can read is said alike by the phone, beside the field and at "Finish and sign",
and by the server that refuses it: the field, the value typed and what is allowed.

The server's words (inspections/services/reading_check.py): "Supply-air temperature: −300 °C is impossible;
allowed −60 to 120 °C". The phone's (limits.js ``outOfRange``, from the field's label, its typed text, its unit and
the physical range the page gives it) are held to them here, in the reader's units.
"""

import html
import json
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from tests.factories.inspections import component, make_visit, r, sync_form

from .test_sync import post

pytestmark = pytest.mark.django_db

JS = Path(__file__).resolve().parents[2] / "frontend" / "static" / "frontend" / "js"
RUNNER = """
import { outOfRange, plausibility } from "./limits.js";
const [label, typed, unit, limits, decimals] = JSON.parse(process.argv[2]);
const value = Number(typed.replace(",", "."));
console.log(JSON.stringify(outOfRange(label, typed, unit, plausibility(value, limits, unit, decimals).allowed)));
"""


def phone_words(tmp_path, page: str, field_id: str, typed: str, system: str) -> str:
    """What the phone says of ``typed`` in the field ``field_id`` of the checklist page."""
    tag = re.search(rf'<input [^>]*id="{field_id}"[^>]*>', page)
    assert tag is not None, field_id
    attrs = dict(re.findall(r'([\w-]+)="([^"]*)"', tag.group(0)))
    label = re.search(rf'<label for="{field_id}">(.*?)<', page, re.S)
    assert label is not None
    context = re.search(r'<script id="evaluation-context" type="application/json">(.*?)</script>', page, re.S)
    assert context is not None
    quantity = json.loads(context.group(1))["slots"]
    limits = json.loads(html.unescape(attrs["data-limits"]))
    unit = html.unescape(attrs["data-unit"])
    decimals = json.loads(context.group(1))["decimals"]
    item = next(s for s in quantity if field_id.startswith(f"r-{s['item'].replace('.', '-')}"))
    places = decimals[item["quantity"]][1 if system == "us" else 0]
    for module in JS.glob("*.js"):
        shutil.copy(module, tmp_path / module.name)
    (tmp_path / "runner.mjs").write_text(RUNNER)
    (tmp_path / "package.json").write_text('{"type": "module"}')
    args = json.dumps([label.group(1).strip(), typed, unit, limits, places])
    proc = subprocess.run(
        ["node", "runner.mjs", args], capture_output=True, text=True, timeout=60, cwd=tmp_path, check=False
    )
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)


@pytest.mark.parametrize(
    ("task", "item", "bank", "typed", "system", "expected"),
    [
        # Physical ranges of inspections/checklist_items.py; 1 in. w.c. = 249.08891 Pa (NIST SP 811 B.8).
        ("controls_check", "supply_air", None, "-300", "si", "−300 °C is impossible; allowed −60 to 120 °C"),
        (
            "filter_check",
            "dp",
            "Final filters",
            "-0.5",
            "us",
            "−0.5 in. w.c. is impossible; allowed 0 to 20.07 in. w.c.",
        ),
    ],
)
def test_the_phone_says_an_impossible_value_as_the_server_refuses_it(
    api_client, client, tmp_path, task, item, bank, typed, system, expected
):
    wo, tech = make_visit(tasks=[task])
    tech.unit_system = system
    tech.save(update_fields=["unit_system"])
    part = component(wo.ahu, bank) if bank else None
    [res] = post(api_client, tech, [sync_form(wo, [r(f"{task}.{item}", float(typed), part)], unit_system=system)])
    assert res["status"] == "refused"
    [server] = res["errors"]["readings[0].value"]

    client.force_login(tech)
    page = client.get(f"/w/{wo.public_id}/").content.decode()
    field_id = f"r-{task}-{item}-{part.label_code if part else 'unit'}"
    phone = phone_words(tmp_path, page, field_id, typed, system)
    assert phone.endswith(expected) and server.endswith(expected), (phone, server)
    assert phone.partition(": ")[2] == server.partition(": ")[2]
