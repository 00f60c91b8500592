"""A reading no check judges reads in plain words on the phone, from the server's one place.

Tryout (issue 19): the phone said "recorded nothing judges this reading on its own" beside a reading no rule
judges. It now reads "Recorded — no limit applies to this reading": the words live in
``inspections.display`` and travel to the phone in the checklist's evaluation context (API document and
page alike); checklist.js keeps no copy of its own.
"""

import json
import re

import pytest

from inspections import display
from tests.factories.inspections import make_visit

pytestmark = pytest.mark.django_db

PLAIN = {"recorded": "Recorded", "unjudged": "no limit applies to this reading", "not_judged": "Not judged"}


def test_the_words_are_plain_and_name_no_judge():
    assert display.reading_words() == PLAIN
    assert display.verdict_words("") == "Recorded"
    assert "judges" not in " ".join(PLAIN.values())


def test_the_phone_reads_the_servers_words_from_the_checklist(api_client, client):
    wo, tech = make_visit(tasks=["damper_actuator"])
    api_client.force_authenticate(tech)
    body = api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()
    assert body["evaluation"]["words"] == PLAIN

    client.force_login(tech)
    page = client.get(f"/w/{wo.public_id}/").content.decode()
    context = re.search(r'<script id="evaluation-context" type="application/json">(.*?)</script>', page, re.S)
    assert context is not None
    assert json.loads(context.group(1))["words"] == PLAIN
