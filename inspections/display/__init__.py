"""What a person reads of a judgement: verdicts in words and derived values with plain labels.

One place for both, used by the record page, the result of a synced form, the inspection report
PDF and the unit history. Derived values are stored in SI with the unit in the key
(``inspections.evaluation``); here each known key gets a label in plain words and its value in
the reader's units (through ``inspections.reasons``, i.e. ``engineering.formatting``). A key without a
label is not shown: a reader never sees a stored key. Yes/no values read as words, or not at all.

``words`` holds the verdicts, messages, derived rows and statuses; ``sentences`` the derived values as whole
sentences (a technician's result, a record). The package answers with their public names.
"""

from __future__ import annotations

from .sentences import FLAG_SENTENCES, derived_sentences, derived_text, forecast_note_words
from .words import (
    DERIVED,
    DERIVED_FLAGS,
    DERIVED_HIDDEN,
    DRIFT_QUANTITIES,
    NOT_JUDGED_WORDS,
    RECORDED_WORDS,
    STATUS_WORDS,
    UNJUDGED_WORDS,
    VERDICT_WORDS,
    WHOLE_UNIT_WORDS,
    derived_rows,
    loading_words,
    place_heading,
    place_words,
    plain_message,
    reading_verdict_words,
    reading_words,
    refusal_parts,
    status_words,
    verdict_words,
)

__all__ = [
    "DERIVED",
    "DERIVED_FLAGS",
    "DERIVED_HIDDEN",
    "DRIFT_QUANTITIES",
    "FLAG_SENTENCES",
    "NOT_JUDGED_WORDS",
    "RECORDED_WORDS",
    "STATUS_WORDS",
    "UNJUDGED_WORDS",
    "VERDICT_WORDS",
    "WHOLE_UNIT_WORDS",
    "derived_rows",
    "derived_sentences",
    "derived_text",
    "forecast_note_words",
    "loading_words",
    "place_heading",
    "place_words",
    "plain_message",
    "reading_verdict_words",
    "reading_words",
    "refusal_parts",
    "status_words",
    "verdict_words",
]
