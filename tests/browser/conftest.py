"""Playwright against Debian's Chromium (never a downloaded browser) and Django's live server."""

import datetime as dt
import os
import time
from pathlib import Path

import pytest
import time_machine
from playwright.sync_api import Browser, Page

from tests.conftest import OUTPUT_DIR, TEST_NOW, service_missing
from tests.frontend import scenario as scenario_module

# Playwright's sync API runs an event loop in the test thread; the ORM calls in tests are still synchronous.
os.environ["DJANGO_ALLOW_ASYNC_UNSAFE"] = "true"


def _wait_for_function(self, expression, *, arg=None, timeout=None, polling=None):
    """Page.wait_for_function that works under our Content-Security-Policy (no 'unsafe-eval').

    Playwright's own version runs the predicate through the page's eval(), which the policy blocks; this
    one polls with page.evaluate (sent over the DevTools protocol, which no page policy governs) and returns
    the truthy value's handle, so every browser test keeps running with the real policy in force.
    """
    deadline = time.monotonic() + (30000 if timeout is None else timeout) / 1000
    interval = polling if isinstance(polling, int | float) else 100
    while True:
        if self.evaluate(expression, arg):
            return self.evaluate_handle(expression, arg)
        if time.monotonic() > deadline:
            raise TimeoutError(f"wait_for_function: {expression!r} stayed false for {timeout} ms")
        self.wait_for_timeout(interval)


Page.wait_for_function = _wait_for_function

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
    "--disable-quic",
]
SCREENSHOTS = OUTPUT_DIR / "screenshots"
PHONE = {"width": 360, "height": 780}
DESKTOP = {"width": 1280, "height": 900}


@pytest.fixture(scope="session")
def browser_type_launch_args(browser_type_launch_args):
    if not Path(CHROMIUM).exists():
        service_missing(f"Chromium is not installed at {CHROMIUM} (apt-get install chromium)")
    return {**browser_type_launch_args, "executable_path": CHROMIUM, "args": CHROMIUM_ARGS, "headless": True}


@pytest.fixture(autouse=True)
def browser_clock(monkeypatch):
    """The server and every phone or desk browser on one controlled clock, ticking from ``TEST_NOW``.

    A journey read the machine's real date: the board offered the next weekday for a visit due "today" on a
    Saturday, or the hour after the sites' midnight (Europe/Amsterdam) made UTC's today their yesterday, and a
    visit assigned on the board did not show on the technician's today. Each test starts at the same Wednesday
    10:00 UTC (the same date in every zone the tests' sites use); the live server (a thread of this process)
    reads it through time_machine, and each browser context created in the test gets Playwright's clock set to
    the server's now at that moment, so the phone's "today" and its form times agree with the server's. A test
    that travels elsewhere itself (the board's March 2025 world) starts its browsers there.
    """
    original = Browser.new_context

    def new_context(self, *args, **kwargs):
        context = original(self, *args, **kwargs)
        context.clock.install(time=dt.datetime.now(dt.UTC))  # the travelled now; it flows on as the server's
        return context

    monkeypatch.setattr(Browser, "new_context", new_context)
    with time_machine.travel(TEST_NOW, tick=True):
        yield


@pytest.fixture
def world(transactional_db):
    return scenario_module.build()


@pytest.fixture
def screenshots():
    SCREENSHOTS.mkdir(parents=True, exist_ok=True)
    return SCREENSHOTS


@pytest.fixture
def sign_in(live_server):
    def _sign_in(page, user):
        page.goto(f"{live_server.url}/login/")
        page.get_by_label("Username").fill(user.username)
        page.get_by_label("Password").fill(scenario_module.PASSWORD)
        page.get_by_role("button", name="Sign in").click()
        page.wait_for_load_state("load")
        return page

    return _sign_in


def _drop_connection():
    raise BrokenPipeError("the test phone is offline")


@pytest.fixture
def offline(context, live_server):
    """``offline(True)``: no signal, for the page and for its service worker alike; ``offline(False)``: back.

    Chromium's offline emulation does not reach the service worker's own fetches (a page served through the
    worker would still come from the server), so the test server also drops every connection while the phone
    is offline. The (session-wide) server always takes connections again after the test.
    """
    httpd = live_server.thread.httpd

    def _offline(on: bool, *, server: bool = True) -> None:
        # Back online: the server answers again *before* the phone hears "online" (it sends at once on that
        # event); ``server=False`` leaves it unreachable: signal back, network not yet (the phone must retry).
        if on:
            context.set_offline(True)
            httpd.get_app = _drop_connection  # every request, kept-alive connections too: closed with no answer
            return
        if server:
            httpd.__dict__.pop("get_app", None)
        context.set_offline(False)

    def _server_back() -> None:
        httpd.__dict__.pop("get_app", None)

    _offline.server_back = _server_back  # type: ignore[attr-defined]

    yield _offline
    httpd.__dict__.pop("get_app", None)
