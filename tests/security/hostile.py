"""Hostile values and a deterministic mutator: every field of a valid body, replaced by each hostile value in turn.

A careless or hostile client sends what JSON (and Python's JSON reader) lets through: NaN and ±Infinity
tokens, 1e309 (read as infinity), NUL and other control characters, years 1 and 9999, 2³¹ and 2⁶³,
deep nesting and the wrong type (a list where text is expected, a number where text is, ...).
``mutations`` walks a valid body down to its leaves (into nested objects and the first item of each list)
and yields one body per leaf × hostile value, so a failure names the exact field and value and
reproduces without a random seed.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class Raw:
    """A JSON token written as is (``json.dumps`` cannot spell 1e309 or deep nesting)."""

    text: str
    name: str

    def __repr__(self) -> str:
        return self.name


DEEP = 5000  # well past Python's recursion limit when read recursively (common practice for a nesting bomb)

DEEP_LIST = Raw("[" * DEEP + "]" * DEEP, "deep list")

# Values put into a JSON body in place of one field: every field gets the common ones, and those of its kind
# (a number field the non-numbers and out-of-range numbers, a text field dates and numbers where text is).
COMMON: tuple[Any, ...] = ("a\x00b", "\x07\x1b[2J\u202e\x85", True, None, [], {"x": [1]}, "x" * 20_000, DEEP_LIST)
FOR_NUMBERS: tuple[Any, ...] = (
    float("nan"),
    float("inf"),
    float("-inf"),
    Raw("1e309", "1e309"),
    "NaN",
    "-Infinity",
    "1e309",
    "\x00",
    2**31,
    2**63,
    -(2**63) - 1,
    10**40,
    -1,
)
FOR_TEXT: tuple[Any, ...] = (
    "\x00",
    "",
    "0001-01-01",
    "9999-12-31",
    "0001-01-01T00:00:00Z",
    "9999-12-31T23:59:59+14:00",
    float("nan"),
    Raw("1e309", "1e309"),
    2**63,
)
FOR_OTHER: tuple[Any, ...] = (float("nan"), "NaN", 2**63, "\x00", "")
_ALL = (*COMMON, *FOR_NUMBERS, *FOR_TEXT, *FOR_OTHER)
JSON_VALUES: tuple[Any, ...] = tuple(v for i, v in enumerate(_ALL) if repr(v) not in map(repr, _ALL[:i]))


def values_for(valid: Any) -> tuple[Any, ...]:
    """The hostile values tried in place of ``valid``: the common ones and those of its kind."""
    if isinstance(valid, bool | dict | list):
        return (*COMMON, *FOR_OTHER)
    if isinstance(valid, int | float):
        return (*COMMON, *FOR_NUMBERS)
    return (*COMMON, *FOR_TEXT)


# Values put into a query parameter, a form field or a multipart field (text only travels there).
TEXT_VALUES: tuple[str, ...] = (
    "nan",
    "inf",
    "-Infinity",
    "1e309",
    "\x00",
    "a\x00b",
    "\x07\x1b[2J\u202e\x85",
    "0001-01-01",
    "9999-12-31",
    "0001-01-01T00:00",
    "9999-12-31T23:59",
    str(2**31),
    str(2**63),
    str(-(2**63) - 1),
    "-1",
    "1.5",
    "[]",
    '{"x": 1}',
    "x" * 20_000,
    "[" * DEEP,
)


def dumps(body: Any) -> str:
    """JSON text of ``body`` with NaN/Infinity tokens and each ``Raw`` written as its token."""
    raws: dict[str, str] = {}

    def swap(value: Any) -> Any:
        if isinstance(value, Raw):
            marker = f"@@raw{len(raws)}@@"
            raws[f'"{marker}"'] = value.text
            return marker
        if isinstance(value, dict):
            return {k: swap(v) for k, v in value.items()}
        if isinstance(value, list):
            return [swap(v) for v in value]
        return value

    text = json.dumps(swap(body), allow_nan=True)
    for marker, token in raws.items():
        text = text.replace(marker, token)
    return text


def leaves(body: Any, path: tuple = ()) -> Iterator[tuple]:
    """Paths to every value of ``body`` (keys and list index 0), objects and lists included."""
    if path:
        yield path
    if isinstance(body, dict):
        for key, value in body.items():
            yield from leaves(value, (*path, key))
    elif isinstance(body, list) and body:
        yield from leaves(body[0], (*path, 0))


def replaced(body: Any, path: tuple, value: Any) -> Any:
    """A copy of ``body`` with the value at ``path`` replaced."""
    if not path:
        return value
    head, rest = path[0], path[1:]
    if isinstance(body, dict):
        return {**body, head: replaced(body[head], rest, value)}
    copy = list(body)
    copy[head] = replaced(copy[head], rest, value)
    return copy


def value_at(body: Any, path: tuple) -> Any:
    for key in path:
        body = body[key]
    return body


def mutations(body: dict, *, max_depth: int = 8) -> Iterator[tuple[tuple, Any]]:
    """(path, hostile value) for every leaf of ``body`` (down to ``max_depth`` keys) × each hostile value of its
    kind, then the whole body (path ``()``) replaced by a list, text, a number, null and deep nesting.
    ``replaced(body, path, value)`` makes the body to send."""
    for path in leaves(body):
        if len(path) > max_depth:
            continue
        for value in values_for(value_at(body, path)):
            yield path, value
    for value in ([body], "text", 1, None, DEEP_LIST):
        yield (), value


def nonsense(value: Any, valid: Any) -> bool:
    """A value no field of ``valid``'s kind takes (so a refusal must name the field that holds it): NaN, ±Infinity,
    NUL, deep nesting, 1e309 where a number is, a list or an object where a plain value is."""
    if isinstance(value, float):
        return value != value or value in (float("inf"), float("-inf"))
    if isinstance(value, Raw):
        return value is DEEP_LIST or (isinstance(valid, int | float) and not isinstance(valid, bool))
    if isinstance(value, list | dict):
        return not isinstance(valid, list | dict)
    return isinstance(value, str) and "\x00" in value
