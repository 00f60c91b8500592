"""Run the phone's JavaScript modules under Node, as they ship, on cases written by a test."""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path
from typing import Any

from tests.conftest import service_missing

JS = Path(__file__).resolve().parents[1] / "frontend" / "static" / "frontend" / "js"


def node_json(tmp_path: Path, runner: str, cases: Any, *, timeout: int = 120) -> Any:
    """Copy the phone's modules into ``tmp_path``, run ``runner`` (an ES module reading ``cases.json``, its
    first argument) under Node and return what it prints as JSON. Skipped locally without Node, a failure
    under CI (``service_missing``); a script error fails the test with Node's message."""
    if shutil.which("node") is None:
        service_missing("node is not installed (make system installs nodejs)")
    for module in JS.glob("*.js"):
        shutil.copy(module, tmp_path / module.name)
    (tmp_path / "runner.mjs").write_text(runner)
    (tmp_path / "package.json").write_text('{"type": "module"}')
    (tmp_path / "cases.json").write_text(json.dumps(cases))
    proc = subprocess.run(
        ["node", "runner.mjs", "cases.json"], capture_output=True, text=True, timeout=timeout, cwd=tmp_path, check=False
    )
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)
