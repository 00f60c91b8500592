"""The strict Content-Security-Policy in a real browser: the main pages of each demo role break no rule.

The demo is loaded as ``make run`` loads it (around today; nothing here depends on the date). Chromium
reports each blocked inline script, handler, style or <style> as a console message naming the
Content Security Policy; any such message on any page fails the test. The manager's site page must still
draw its charts (inline SVG with presentation attributes only), and a screenshot of it is kept.
"""

from __future__ import annotations

from contextlib import contextmanager

import pytest
from django.conf import settings

from frontend.demo import demo_load

from .conftest import DESKTOP, PHONE
from .test_pwa import wait_app

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

DEMO_PASSWORD = "plenum-demo-1"  # fixtures/demo/registry.json, demo only
CSP = "Content Security Policy"


class Watch:
    """Collects the console messages about the Content Security Policy, and page errors, per page."""

    def __init__(self, page):
        self.page = page
        self.problems: list[str] = []
        page.on("console", self._console)
        page.on("pageerror", lambda err: self.problems.append(f"{page.url}: page error: {err}"))

    def _console(self, msg):
        if CSP in msg.text:
            self.problems.append(f"{self.page.url}: {msg.text}")

    def visit(self, url: str, *, app: bool = True):
        response = self.page.goto(url)
        assert response is not None and response.ok, f"{url}: {response and response.status}"
        csp = response.headers.get("content-security-policy", "")
        assert csp and "unsafe-inline" not in csp, f"{url}: {csp!r}"
        if app:
            wait_app(self.page)
        self.page.wait_for_load_state("networkidle")
        return response


def _sign_in(page, base: str, username: str):
    page.goto(f"{base}/login/")
    page.get_by_label("Username").fill(username)
    page.get_by_label("Password").fill(DEMO_PASSWORD)
    page.get_by_role("button", name="Sign in").click()
    page.wait_for_load_state("load")


@contextmanager
def _session(browser, base: str, username: str | None, *, viewport: dict, problems: list[str]):
    """A fresh browser context watched for CSP messages, signed in as ``username`` (or nobody); on leaving,
    its problems join ``problems``."""
    ctx = browser.new_context(viewport=viewport)
    try:
        page = ctx.new_page()
        watch = Watch(page)
        if username:
            _sign_in(page, base, username)
        yield page, watch
        problems += watch.problems
    finally:
        ctx.close()


def _first_href(page, selector: str) -> str:
    link = page.locator(selector).first
    assert link.count(), f"{page.url}: no link {selector}"
    return link.get_attribute("href")


@pytest.fixture
def demo(transactional_db):
    return demo_load()


def test_the_console_watch_sees_a_blocked_inline_style(browser, live_server, db):
    """The watch itself: a style attribute added to the sign-in page is blocked and reported."""
    page = browser.new_context(viewport=PHONE).new_page()
    watch = Watch(page)
    watch.visit(f"{live_server.url}/login/")
    assert watch.problems == []
    page.evaluate("document.body.insertAdjacentHTML('beforeend', '<p style=\"color: red\">x</p>')")
    page.wait_for_timeout(300)
    assert any("style" in p for p in watch.problems), watch.problems


def test_main_pages_of_every_role_break_no_rule(browser, live_server, demo, screenshots):
    """Sign-in, then each role's main pages and the API docs: no CSP message, charts drawn on the site page."""
    base = live_server.url
    problems: list[str] = []

    with _session(browser, base, None, viewport=PHONE, problems=problems) as (page, watch):
        watch.visit(f"{base}/login/")

    # Technician: today's round, a checklist, the unit page, the calculator, records.
    with _session(browser, base, "ines.tech", viewport=PHONE, problems=problems) as (page, watch):
        watch.visit(f"{base}/today/")
        checklist = _first_href(page, "a[href^='/w/']")
        watch.visit(base + checklist)
        watch.visit(f"{base}/u/")
        unit = _first_href(page, "a[href^='/u/']") if page.locator("a[href^='/u/']").count() else None
        if unit:
            watch.visit(base + unit)
        watch.visit(f"{base}/calc/")
        watch.visit(f"{base}/records/")

    # Supervisor: the board, the registry and a unit in it, findings, corrective work, flagged forms, API docs.
    with _session(browser, base, "ruth.supervisor", viewport=DESKTOP, problems=problems) as (page, watch):
        watch.visit(f"{base}/board/")
        assert page.locator("caption.table-note").first.evaluate("c => getComputedStyle(c).textAlign") == "left"
        watch.visit(f"{base}/registry/")
        watch.visit(base + _first_href(page, "a[href^='/registry/unit/']"))
        for path in ("/findings/", "/corrective/", "/flagged/", "/records/", "/new-work/"):
            watch.visit(base + path)
        watch.visit(f"{base}/api/docs/", app=False)
        page.locator(".swagger-ui .info").wait_for(timeout=15000)
        assert page.locator(".swagger-ui .opblock").count() > 5, "Swagger UI did not list the API"

    # Property manager: the dashboard and a site page with its charts.
    with _session(browser, base, "helena.pm", viewport=DESKTOP, problems=problems) as (page, watch):
        watch.visit(f"{base}/dashboard/")
        watch.visit(base + _first_href(page, "a[href^='/dashboard/site/']"))
        charts = page.locator("figure.chart svg")
        assert charts.count() >= 1, "the site page shows no chart"
        for i in range(charts.count()):
            box = charts.nth(i).bounding_box()
            assert box and box["width"] > 200 and box["height"] > 50, f"chart {i} is not drawn: {box}"
        assert page.locator("figure.chart svg path").count() >= 1, "a chart has no line"
        page.screenshot(path=screenshots / "csp-manager-site.png", full_page=True)
        watch.visit(f"{base}/records/")

    # Administrator: the start page (its menu) and the board.
    with _session(browser, base, "samir.admin", viewport=DESKTOP, problems=problems) as (page, watch):
        watch.visit(f"{base}/")
        watch.visit(f"{base}/board/")

    assert settings.CONTENT_SECURITY_POLICY["DIRECTIVES"]["style-src"] == ["'self'"]
    assert problems == [], "\n".join(problems[:30])
