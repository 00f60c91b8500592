"""Whole API answers cached in the worker process, valid while the versions they depend on stay.

A polled read (a technician's today, a supervisor's board) is asked for again and again while
nothing changes. Its JSON bytes are kept per process under (view, person, parameters, versions), where
versions are the part of the person's versions (``accounts.changes``) its :class:`Polled` scope names: a
technician's today depends on their organisations' versions and on their own work's version, a board on
the organisations' versions and their work versions. A service that changes what an answer depends on
moves the matching version in its own transaction (``organisation_changed`` for what everyone's answers
show, ``work_changed`` for work orders, naming the people whose own work changed), so the next request
builds the answer afresh, while another organisation's answers, and another technician's today, stay kept.

``answer_fast_path`` puts a check in front of the DRF view: a GET with a token whose answer is
already kept is answered from memory with the bytes and headers the view gave the first time, at
the cost of one query (the token, its person being active and their versions). Anything
else (no token, a new parameter, a bad one, another media type) goes to the view as usual, which builds,
keeps and answers. Every answer carries an ETag of its bytes; a GET with that ETag in If-None-Match
gets 304 with no body.

Answers also expire after ``settings.PLENUM_ANSWER_CACHE_SECONDS`` (0 turns the cache off), which
bounds how long a write made outside the services (psql by hand) can hide, and the cache holds at most
``settings.PLENUM_ANSWER_CACHE_BYTES`` of answers, least recently used out first. Nothing is shared
between processes: each worker keeps its own, checked against the versions in the database, so no
cache server is needed and several app servers agree.

Inside a transaction (a test's, or a request that writes first) the cache stands aside: the versions it
would read may be moved by writes that are not committed yet.
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
from django.db import transaction
from django.http import HttpResponse
from django.utils.cache import get_conditional_response
from rest_framework.authentication import TokenAuthentication, get_authorization_header
from rest_framework.renderers import JSONRenderer

from .changes import Scope, Versions, token_versions, versions_of

_ATTR = "_plenum_answer_versions"
TOKEN_ENTRY_BYTES = 1_000  # what a kept token or small value counts against the byte limit
JSON = "application/json"
PLAIN_JSON_ACCEPTS = frozenset({"", "*/*", JSON})  # what DRF answers with JSONRenderer as application/json


@dataclass(frozen=True, slots=True)
class Polled:
    """A polled read kept here: its name in the keys, and what its answer depends on. The view's
    ``json_answer`` and its URL's ``answer_fast_path`` are given the same one, so both use the same key."""

    view: str
    scope: Scope


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


def _cache_usable() -> bool:
    """The cache is on, and this connection holds no transaction (whose writes may move a version)."""
    return settings.PLENUM_ANSWER_CACHE_SECONDS > 0 and transaction.get_autocommit()


def versions_for(request) -> Versions | None:
    """The versions this request is answered under (read once per request, for its authenticated person),
    or None when the cache may not be used: turned off, inside a transaction, nobody signed in, or a person
    of no organisation."""
    raw = getattr(request, "_request", request)  # DRF's Request wraps Django's
    if hasattr(raw, _ATTR):
        return getattr(raw, _ATTR)
    versions = None
    user = getattr(request, "user", None)
    if _cache_usable() and user is not None and user.is_authenticated:
        versions = versions_of(user_id=user.pk)
    setattr(raw, _ATTR, versions)
    return versions


def kept(request, key: tuple, build: Callable[[], object]):
    """A small value the answers depend on (a person's time zone…), kept under the request's organisations'
    versions (``Scope.ORGANISATIONS``: it must not depend on work orders)."""
    versions = versions_for(request)
    if versions is None:
        return build()
    cache_key = ("value", key, versions.key(Scope.ORGANISATIONS))
    found = _store.get(cache_key)
    if found is None:
        found = (build(),)
        _store.put(cache_key, found)
    return found[0]


def json_answer(request, *, polled: Polled, key: tuple, build: Callable[[], object]) -> HttpResponse | None:
    """The JSON answer of ``polled`` for the request's person and ``key`` (every parameter the answer
    depends on), from the cache while the versions of its scope stay, else built by ``build()`` and kept
    (with the person, for ``answer_fast_path``).

    Returns None when the request did not negotiate plain JSON (the browsable API): the caller answers
    it the ordinary way. The response carries an ETag of its bytes, so a conditional GET gets 304.
    """
    renderer = getattr(request, "accepted_renderer", None)
    if type(renderer) is not JSONRenderer:
        return None
    versions = versions_for(request)
    scoped = versions.key(polled.scope) if versions is not None else None
    cache_key = ("answer", polled.view, request.user.pk, request.accepted_media_type, key, scoped)
    entry = _store.get(cache_key) if versions is not None else None
    if entry is None:
        body = renderer.render(build(), request.accepted_media_type, {"request": request})
        entry = _Answer(body, f'"{hashlib.md5(body, usedforsecurity=False).hexdigest()}"')
        if versions is not None:
            _store.put(cache_key, entry)
            person_key = ("person", request.user.pk, versions.key(Scope.ORGANISATIONS))
            if _store.get(person_key) is None:
                _store.put(person_key, (copy.copy(request.user),))
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


def _kept_answer(request, *, polled: Polled, key_of: Callable) -> HttpResponse | None:
    if request.method != "GET" or request.META.get("HTTP_ACCEPT", "").strip() not in PLAIN_JSON_ACCEPTS:
        return None
    token_key = _token_key(request)
    if token_key is None or not _cache_usable():
        return None
    found = token_versions(key=token_key)  # the one query: token, active person, their versions
    if found is None:
        return None  # the view refuses the token (401) or answers someone of no organisation
    person_id, versions = found
    setattr(request, _ATTR, versions)  # what key_of's kept values (and the view, if it answers) go by
    person = _store.get(("person", person_id, versions.key(Scope.ORGANISATIONS)))
    if person is None:
        return None
    try:
        key = key_of(request, person[0])
    except (ValidationError, ValueError):
        return None  # the view answers 400 with the field's message
    entry = _store.get(("answer", polled.view, person_id, JSON, key, versions.key(polled.scope)))
    if entry is None or entry.headers is None:
        return None
    response = HttpResponse(entry.body)
    for name, value in entry.headers:
        response[name] = value
    return get_conditional_response(request, etag=entry.etag, response=response)


def answer_fast_path(view_func, *, polled: Polled, key_of: Callable):
    """``view_func`` (a DRF view using :func:`json_answer` with the same ``polled``) behind the kept-answer
    check. ``key_of(request, person)`` must be the view's own parameter reading, so both agree on the key."""

    @functools.wraps(view_func)  # keeps DRF's .cls and csrf_exempt, which the schema and CSRF read
    def wrapped(request, *args, **kwargs):
        response = _kept_answer(request, polled=polled, key_of=key_of)
        if response is not None:
            return response
        response = view_func(request, *args, **kwargs)
        entry = getattr(response, "_plenum_answer", None)
        if entry is not None and response.status_code == 200 and entry.headers is None:
            entry.headers = tuple(response.items())
        return response

    return wrapped
