"""One verdict vocabulary (engineering.controls.Verdict): the stored choices, the words pages and PDFs show and the
phone's twins (evaluate.js, checklist.js) all carry its values and labels."""

import json
import re
from pathlib import Path

from engineering.controls import Verdict, worst
from inspections import display
from inspections.models import VERDICT_CHOICES, Evaluation, Reading

JS = Path(__file__).resolve().parents[2] / "frontend" / "static" / "frontend" / "js"


def test_stored_choices_are_the_vocabulary_with_its_labels():
    """The database keeps the values it always kept: ok, watch, fail, na (no migration, no rewrite)."""
    assert VERDICT_CHOICES == [("ok", "OK"), ("watch", "Watch"), ("fail", "Fail"), ("na", "Not applicable")]
    for model in (Evaluation, Reading):
        assert list(model._meta.get_field("verdict").choices) == VERDICT_CHOICES


def test_a_verdict_is_its_plain_value_in_text_and_json():
    assert f"{Verdict.FAIL}" == "fail" and str(Verdict.NOT_APPLICABLE) == "na"
    assert json.dumps({Verdict.WATCH: [Verdict.OK]}) == '{"watch": ["ok"]}'


def test_pages_and_pdfs_read_the_labels():
    assert {code: display.verdict_words(code) for code in Verdict} == {v.value: v.label for v in Verdict}


def test_not_applicable_never_outranks_a_judgement():
    assert worst(Verdict.NOT_APPLICABLE, Verdict.OK) is Verdict.OK
    assert worst(Verdict.WATCH, Verdict.NOT_APPLICABLE, Verdict.FAIL) is Verdict.FAIL


def test_the_phones_verdict_values_and_words_are_the_vocabulary():
    """evaluate.js exports OK / WATCH / FAIL and checklist.js names them in words: the same values and labels."""
    evaluate = (JS / "evaluate.js").read_text()
    values = dict(re.findall(r'^export const (OK|WATCH|FAIL) = "(\w+)";$', evaluate, re.MULTILINE))
    assert values == {v.name: v.value for v in (Verdict.OK, Verdict.WATCH, Verdict.FAIL)}
    checklist = (JS / "checklist.js").read_text()
    words = re.search(r"^const VERDICT_WORDS = \{(.*)\};$", checklist, re.MULTILINE)
    assert words is not None
    assert dict(re.findall(r'(\w+): "([^"]+)"', words.group(1))) == {v.value: v.label for v in Verdict}
