"""The API's JSON reader: a hostile body is a 400 that says what is wrong with it, never a 500.

DRF's own JSONParser refuses NaN/Infinity tokens but lets Python's reader recurse into any
nesting, so ``[[[[...]]]]`` a few thousand deep is a RecursionError (a 500). This one reads
the body without trusting its depth and refuses nesting far beyond what any request of ours
sends (the inspections sync has its own, stricter reader: inspections.api.CheckedJSONParser).
"""

import json

from rest_framework.exceptions import ParseError
from rest_framework.parsers import JSONParser

from inspections.check import depth_within

# The deepest request body we take nests a handful of levels (forms → readings → value; specs; normals):
# anything beyond this is not a request a client of ours sends (common practice: a small fixed limit).
MAX_DEPTH = 32


def _no_constant(name: str):
    raise ValueError(f"{name} is not a JSON number")


class BoundedJSONParser(JSONParser):
    """JSON with NaN/Infinity refused and nesting limited to ``MAX_DEPTH``; both answer 400 'JSON parse error'."""

    def parse(self, stream, media_type=None, parser_context=None):
        encoding = (parser_context or {}).get("encoding") or "utf-8"
        deep = False
        try:
            text = stream.read().decode(encoding) if stream is not None else ""
            value = json.loads(text, parse_constant=_no_constant)
        except RecursionError:
            value, deep = None, True
        except (ValueError, UnicodeDecodeError) as exc:
            raise ParseError(f"JSON parse error - {exc}") from None
        if deep or not depth_within(value, MAX_DEPTH):
            raise ParseError(f"JSON parse error - lists and objects nest more than {MAX_DEPTH} deep")
        return value
