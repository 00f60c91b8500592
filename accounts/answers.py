"""Whole API answers cached in the worker process, valid while the change stamp stays the same.

A polled read (a technician's today, a supervisor's board) is asked for again and again while
nothing changes. Its JSON bytes are kept per process under (view, person, parameters, stamp);
any committed write moves the stamp (``accounts.changes``), so the next request builds the answer
afresh. A token seen under the same stamp is not looked up again (revoking it, or deactivating its
person, is a write, so it is looked up again at once).

``answer_fast_path`` puts a check in front of the DRF view: a GET with a token whose answer is
already kept is answered from memory with the bytes and headers the view gave the first time, at
the cost of one read of the stamp. Anything else (no token, a new parameter, a bad one, another
media type) goes to the view as usual, which builds, keeps and answers.

Answers also expire after ``settings.PLENUM_ANSWER_CACHE_SECONDS`` (0 turns the cache off), and the
cache holds at most ``settings.PLENUM_ANSWER_CACHE_BYTES`` of answers, least recently used out first.
Nothing is shared between processes: each worker keeps its own, checked against the one stamp in
the database, so no cache server is needed.
"""

from __future__ import annotations

import copy
import functools
import hashlib
import threading
import time
from collections.abc import Callable, Hashable
from dataclasses import dataclass

from cachetools import TTLCache
from django.conf import settings
from django.core.exceptions import ValidationError
from django.http import HttpResponse
from django.utils.cache import get_conditional_response
from rest_framework.authentication import TokenAuthentication, get_authorization_header
from rest_framework.renderers import JSONRenderer

from .changes import change_stamp_read, changes_pending

_ATTR = "_plenum_change_stamp"
TOKEN_ENTRY_BYTES = 1_000  # what a kept token or small value counts against the byte limit
JSON = "application/json"
PLAIN_JSON_ACCEPTS = frozenset({"", "*/*", JSON})  # what DRF answers with JSONRenderer as application/json


@dataclass(slots=True)
class _Answer:
    body: bytes
    etag: str
    headers: tuple[tuple[str, str], ...] | None = None  # the view's final headers, once it has answered


class _Store:
    """A lock around a TTL + LRU cache sized in bytes; made on first use from the settings."""

    def __init__(self) -> None:
        self._lock = threading.Lock()
        self._cache: TTLCache | None = None

    def _made(self) -> TTLCache | None:
        seconds = settings.PLENUM_ANSWER_CACHE_SECONDS
        if seconds <= 0:
            return None
        if self._cache is None or self._cache.ttl != seconds:
            self._cache = TTLCache(
                maxsize=settings.PLENUM_ANSWER_CACHE_BYTES, ttl=seconds, timer=lambda: _clock(), getsizeof=_size
            )
        return self._cache

    def get(self, key: Hashable):
        with self._lock:
            cache = self._made()
            return None if cache is None else cache.get(key)

    def put(self, key: Hashable, value) -> None:
        with self._lock:
            cache = self._made()
            if cache is not None and _size(value) <= cache.maxsize:
                cache[key] = value

    def clear(self) -> None:
        with self._lock:
            self._cache = None


def _clock() -> float:
    return time.monotonic()


def _size(value) -> int:
    return len(value.body) + 500 if isinstance(value, _Answer) else TOKEN_ENTRY_BYTES


_store = _Store()


def answer_cache_clear() -> None:
    """Forget every cached answer and token of this process."""
    _store.clear()


def stamp_for(request) -> tuple[str, int] | None:
    """The change stamp this request is answered under (read once per request), or None when the cache
    may not be used: turned off, or this connection holds uncommitted writes."""
    raw = getattr(request, "_request", request)  # DRF's Request wraps Django's
    if hasattr(raw, _ATTR):
        return getattr(raw, _ATTR)
    stamp = None
    if settings.PLENUM_ANSWER_CACHE_SECONDS > 0 and not changes_pending():
        stamp = change_stamp_read()
    setattr(raw, _ATTR, stamp)
    return stamp


class StampedTokenAuthentication(TokenAuthentication):
    """DRF's token authentication, remembering a token's person while the change stamp stays the same."""

    def authenticate(self, request):
        if _token_parts(request) is None:
            return None  # as DRF's: not a token request (and no read of the stamp for it)
        self._stamp = stamp_for(request)
        return super().authenticate(request)

    def authenticate_credentials(self, key):
        stamp = getattr(self, "_stamp", None)
        if stamp is None:
            return super().authenticate_credentials(key)
        cache_key = ("token", key, stamp)
        found = _store.get(cache_key)
        if found is None:
            found = super().authenticate_credentials(key)  # raises for a bad or inactive one
            _store.put(cache_key, found)
        user, token = found
        return copy.copy(user), token


def kept(request, key: tuple, build: Callable[[], object]):
    """A small value the answers depend on (a person's time zone…), kept under the request's stamp like them."""
    stamp = stamp_for(request)
    if stamp is None:
        return build()
    cache_key = ("value", key, stamp)
    found = _store.get(cache_key)
    if found is None:
        found = (build(),)
        _store.put(cache_key, found)
    return found[0]


def json_answer(request, *, view: str, key: tuple, build: Callable[[], object]) -> HttpResponse | None:
    """The JSON answer of ``view`` for the request's person and ``key`` (every parameter the answer
    depends on), from the cache when the stamp has not moved, else built by ``build()`` and kept.

    Returns None when the request did not negotiate plain JSON (the browsable API): the caller answers
    it the ordinary way. The response carries an ETag of its bytes, so a conditional GET gets 304.
    """
    renderer = getattr(request, "accepted_renderer", None)
    if type(renderer) is not JSONRenderer:
        return None
    stamp = stamp_for(request)
    cache_key = ("answer", view, request.user.pk, request.accepted_media_type, key, stamp)
    entry = _store.get(cache_key) if stamp is not None else None
    if entry is None:
        body = renderer.render(build(), request.accepted_media_type, {"request": request})
        entry = _Answer(body, f'"{hashlib.md5(body, usedforsecurity=False).hexdigest()}"')
        if stamp is not None:
            _store.put(cache_key, entry)
    response = HttpResponse(entry.body, content_type=renderer.media_type)
    response["ETag"] = entry.etag
    response._plenum_answer = entry
    return response


def _token_parts(request) -> list[bytes] | None:
    """The parts of an ``Authorization: Token …`` header (DRF's keyword), else None. Either kind of request."""
    parts = get_authorization_header(request).split()
    return parts if parts and parts[0].lower() == TokenAuthentication.keyword.lower().encode() else None


def _token_key(request) -> str | None:
    """The key of a well-formed token header; anything else is left to DRF's own checks and messages."""
    parts = _token_parts(request)
    if parts is None or len(parts) != 2:
        return None
    try:
        return parts[1].decode()
    except UnicodeError:
        return None


def _kept_answer(request, *, view: str, key_of: Callable) -> HttpResponse | None:
    if request.method != "GET" or request.META.get("HTTP_ACCEPT", "").strip() not in PLAIN_JSON_ACCEPTS:
        return None
    token_key = _token_key(request)
    if token_key is None:
        return None
    stamp = stamp_for(request)
    if stamp is None:
        return None
    person = _store.get(("token", token_key, stamp))
    if person is None:
        return None
    try:
        key = key_of(request, person[0])
    except (ValidationError, ValueError):
        return None  # the view answers 400 with the field's message
    entry = _store.get(("answer", view, person[0].pk, JSON, key, stamp))
    if entry is None or entry.headers is None:
        return None
    response = HttpResponse(entry.body)
    for name, value in entry.headers:
        response[name] = value
    return get_conditional_response(request, etag=entry.etag, response=response)


def answer_fast_path(view_func, *, view: str, key_of: Callable):
    """``view_func`` (a DRF view using :func:`json_answer` under the name ``view``) behind the kept-answer
    check. ``key_of(request, person)`` must be the view's own parameter reading, so both agree on the key."""

    @functools.wraps(view_func)  # keeps DRF's .cls and csrf_exempt, which the schema and CSRF read
    def wrapped(request, *args, **kwargs):
        response = _kept_answer(request, view=view, key_of=key_of)
        if response is not None:
            return response
        response = view_func(request, *args, **kwargs)
        entry = getattr(response, "_plenum_answer", None)
        if entry is not None and response.status_code == 200 and entry.headers is None:
            entry.headers = tuple(response.items())
        return response

    return wrapped
