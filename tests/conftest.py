"""Shared test fixtures.

Tests that need PostgreSQL, Redis or the browser skip when those are missing,
except under CI (the ``CI`` environment variable), where they fail instead.
"""

import os
import socket
from pathlib import Path

import pytest

OUTPUT_DIR = Path(__file__).resolve().parent.parent / "test-output"


def in_ci() -> bool:
    return bool(os.environ.get("CI"))


def service_missing(reason: str) -> None:
    """Skip locally; fail under CI, where every service must be there."""
    if in_ci():
        pytest.fail(f"{reason} (CI is set, so this fails instead of skipping)")
    pytest.skip(reason)


def port_open(host: str, port: int) -> bool:
    try:
        with socket.create_connection((host, port), timeout=0.5):
            return True
    except OSError:
        return False


@pytest.fixture
def output_dir() -> Path:
    """Folder for files people look at: screenshots and PDF page images."""
    OUTPUT_DIR.mkdir(exist_ok=True)
    return OUTPUT_DIR


@pytest.fixture
def api_client():
    from rest_framework.test import APIClient

    return APIClient()
