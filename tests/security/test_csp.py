"""Content-Security-Policy: every answer carries the strict policy, and no page needs more.

The policy (config/settings/base.py) lets scripts, styles, connections, workers and the manifest come
only from our own origin, images also from data: and blob: (signatures, photo previews), and nothing may
frame a page. It has no 'unsafe-inline' and no 'unsafe-eval', so any inline <script>, on*= handler,
<style> block or style="..." attribute in a page would be blocked by the browser: the templates are
scanned for them, and so is every page as each role actually receives it (charts drawn in Python too).
The browser's own verdict is in tests/browser/test_csp.py.
"""

from __future__ import annotations

import re
from html.parser import HTMLParser
from pathlib import Path

import pytest
from django.conf import settings
from django.test import Client, override_settings

from accounts.models import Role
from tests.tenancy.test_matrix import CAPABILITY, FILL, _params, _url, routes
from tests.tenancy.world import World, build

ROLES = [Role.TECHNICIAN, Role.SUPERVISOR, Role.PROPERTY_MANAGER, Role.ADMIN, "anonymous"]
# The directives we promise (the brief of this policy); the header must say exactly these.
EXPECTED = {
    "default-src": {"'self'"},
    "script-src": {"'self'"},
    "style-src": {"'self'"},
    "img-src": {"'self'", "data:", "blob:"},
    "font-src": {"'self'"},
    "connect-src": {"'self'"},
    "worker-src": {"'self'"},
    "manifest-src": {"'self'"},
    "frame-ancestors": {"'none'"},
    "base-uri": {"'self'"},
    "form-action": {"'self'"},
    "object-src": {"'none'"},
}
# Our page templates. reports/templates are PDF layouts for WeasyPrint, never served to a browser.
TEMPLATE_DIRS = [
    Path(settings.BASE_DIR) / app / "templates"
    for app in ("frontend", "inventory", "accounts", "scheduling", "inspections", "config")
]


def _policy(response) -> dict[str, set[str]]:
    header = response.get("Content-Security-Policy")
    assert header, f"{response.request['PATH_INFO']}: no Content-Security-Policy header"
    directives = {}
    for part in header.split(";"):
        words = part.split()
        if words:
            directives[words[0]] = set(words[1:])
    return directives


class InlineFinder(HTMLParser):
    """Collects what a strict policy blocks: inline scripts, handlers, <style> blocks and style attributes."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.found: list[str] = []

    def handle_starttag(self, tag, attrs):
        names = dict(attrs)
        if tag == "script" and not names.get("src") and names.get("type") != "application/json":
            self.found.append(f"inline <script> at line {self.getpos()[0]}")
        if tag == "style":
            self.found.append(f"<style> block at line {self.getpos()[0]}")
        for name, _ in attrs:
            if name == "style":
                self.found.append(f"style attribute on <{tag}> at line {self.getpos()[0]}")
            elif name.startswith("on"):
                self.found.append(f"{name} handler on <{tag}> at line {self.getpos()[0]}")
        if tag in ("a", "form", "iframe") and str(names.get("href") or names.get("action") or "").startswith(
            "javascript:"
        ):
            self.found.append(f"javascript: URL on <{tag}> at line {self.getpos()[0]}")

    handle_startendtag = handle_starttag


def inline_parts(html: str) -> list[str]:
    finder = InlineFinder()
    finder.feed(html)
    finder.close()
    return finder.found


# Template source: comments dropped, template tags replaced by a word, so `{% if %}` inside a tag does not
# confuse the parser and `src="{% static ... %}"` stays a non-empty source.
TEMPLATE_COMMENT = re.compile(r"{%\s*comment\s*%}.*?{%\s*endcomment\s*%}|{#.*?#}", re.S)
TEMPLATE_TAG = re.compile(r"{%.*?%}|{{.*?}}", re.S)


@pytest.fixture
def world(db) -> World:
    return build()


def test_the_policy_is_the_promised_one_without_unsafe_inline(client, db):
    """The sign-in page (no one signed in) carries exactly the promised directives."""
    directives = _policy(client.get("/login/"))
    assert directives == EXPECTED
    assert not any("unsafe" in source for sources in directives.values() for source in sources)


def test_the_inline_finder_finds_what_the_browser_blocks():
    """The page scan itself: each thing a strict policy blocks is found, a data block and a file script are not."""
    found = inline_parts(
        '<script>alert(1)</script><script type="application/json" id="d">{}</script><script src="/s.js"></script>'
        '<p style="color:red">x</p><button onclick="go()">b</button><style>p{}</style>'
        '<svg><rect style="fill:red"/></svg><a href="javascript:go()">j</a>'
    )
    assert len(found) == 6, found
    assert inline_parts('<link rel="stylesheet" href="/a.css"><p class="mt-0">x</p><svg><rect fill="red"/></svg>') == []


@pytest.mark.parametrize("role", ROLES)
def test_every_page_carries_the_policy_and_nothing_inline(world, role):
    """Every route (own records filled in), GET as each role: the strict header; an HTML page has nothing inline."""
    client = Client(raise_request_exception=False)
    user = world.person(role)
    if user is not None:
        client.force_login(user)
    problems: list[str] = []
    pages = 0
    for route, name, _ in routes():
        params = _params(route)
        if params and name not in FILL and name not in CAPABILITY:
            continue  # tests/tenancy/test_matrix.py fails for a route it cannot fill
        values = {p: (FILL[name][p](world.a) if name in FILL else "not-a-real-token") for p in params}
        url = _url(route, values)
        response = client.get(url)
        header = response.get("Content-Security-Policy", "")
        if not header:
            problems.append(f"GET {url} ({response.status_code}): no Content-Security-Policy")
            continue
        if "unsafe-inline" in header or "unsafe-eval" in header:
            problems.append(f"GET {url}: the policy allows inline code: {header}")
        if response.status_code == 200 and "text/html" in response.get("Content-Type", "") and not response.streaming:
            pages += 1
            problems += [f"GET {url}: {p}" for p in inline_parts(response.content.decode("utf-8", "replace"))]
    assert pages >= 3, f"{role}: only {pages} HTML pages answered; the walk is not reaching the pages"
    assert not problems, "\n".join(problems[:40])


def test_error_pages_carry_the_policy(client, db):
    """A missing page (the app's own 404 handler) carries the same policy and has nothing inline."""
    response = client.get("/no-such-page-anywhere/")
    assert response.status_code == 404
    assert _policy(response) == EXPECTED
    assert inline_parts(response.content.decode()) == []


@override_settings(ROOT_URLCONF="tests.security.boom_urls")
def test_the_500_page_carries_the_policy(db):
    """A view that fails: the app's 500 page still carries the policy and has nothing inline."""
    response = Client(raise_request_exception=False).get("/boom/")
    assert response.status_code == 500
    assert _policy(response) == EXPECTED
    assert inline_parts(response.content.decode()) == []


def test_no_template_has_inline_script_style_or_handler():
    """A static scan of every page template: scripts and styles come from static files only."""
    templates = [p for d in TEMPLATE_DIRS if d.exists() for p in d.rglob("*.html")]
    assert len(templates) > 20, "the scan found too few templates to be looking in the right place"
    problems = []
    for path in templates:
        source = TEMPLATE_TAG.sub("T", TEMPLATE_COMMENT.sub("", path.read_text()))
        problems += [f"{path.relative_to(settings.BASE_DIR)}: {p}" for p in inline_parts(source)]
    assert not problems, "\n".join(problems)
