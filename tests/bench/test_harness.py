"""``python -m bench`` end to end at a tiny size: every scenario runs and the results files are written."""

import json
import os
import subprocess
import sys
from pathlib import Path

from bench.results import results_markdown

ROOT = Path(__file__).resolve().parents[2]


def test_a_tiny_run_writes_both_results_files(tmp_path):
    """Each scenario reports figures (or says plainly why it did not run); markdown and JSON agree."""
    env = {k: v for k, v in os.environ.items() if k not in {"DATABASE_URL", "DJANGO_SETTINGS_MODULE"}}
    cmd = [
        sys.executable,
        "-m",
        "bench",
        "--sizes",
        "3",
        "--runs",
        "1",
        "--sync-forms",
        "10",
        "--import-rows",
        "250",
        "--per-client",
        "3",
        "--max-seconds",
        "5",
        "--day-seconds",
        "1",
        "--day-forms",
        "60",
        "--clients",
        "5",
        "--out",
        str(tmp_path),
    ]
    proc = subprocess.run(cmd, cwd=ROOT, env=env, capture_output=True, text=True, timeout=420, check=False)
    assert proc.returncode == 0, proc.stdout[-2000:] + proc.stderr[-2000:]
    doc = json.loads((tmp_path / "results.json").read_text())
    assert doc["database"] == "sqlite"
    (size,) = doc["sizes"]
    scenarios = ("work_order_generation", "load", "sync", "mixed_day", "reports", "pwa_shell", "registry_import")
    for name in (*scenarios, "trend_ingest"):
        assert name in size and "error" not in size[name], (name, size.get(name))
    assert size["sync"]["stored_replay"] == 0
    assert size["sync"]["stored_first"] == 10
    assert (size["registry_import"]["rows"], size["registry_import"]["created"]) == (250, 250)
    assert (size["trend_ingest"]["values"], size["trend_ingest"]["judged_units"]) == (3 * 20 * 96, 3)
    for name in ("today", "today_after_change", "board", "board_after_change", "baseline"):
        assert size["load"][name]["requests"] > 0 and not size["load"][name]["errors"], name
    day = size["mixed_day"]
    assert [o["slug"] for o in day["organisations"]] == ["main", "other", "day1", "day2"]
    for kind in ("today", "board", "dashboard"):
        assert day["read_only"][kind]["requests"] > 0 and day["under_writers"][kind]["requests"] > 0, kind
    for kind in ("sync", "assign", "meter"):
        assert day["under_writers"][kind]["requests"] > 0, kind
    md = (tmp_path / "results.md").read_text()
    assert md == results_markdown(doc)
    assert "## Work-order generation" in md and "## PWA app shell" in md and "## Registry CSV import" in md
    assert "| today, kept |" in md and "| board, first pass after a change |" in md
    assert "## Mixed day" in md and "| under writers | sync, one form a request |" in md
    assert "## Building-automation trends: one day ingested and judged" in md


def _doc(size: dict) -> dict:
    """A results document of one size, as ``python -m bench`` writes it."""
    return {
        "generated_at": "2025-03-03T00:00:00+00:00",
        "database": "sqlite",
        "runs_per_figure": 1,
        "total_s": 1,
        "machine": {"cpus": 2, "python": "3.11"},
        "sizes": [size],
    }


def test_a_missed_target_is_said_plainly():
    """A first generation run over 3× its baseline shows MISSED, and a scenario that could not run says why."""
    size = {
        "ahus": 10,
        "sites": 5,
        "portfolio": {"ahus": 11},
        "work_order_generation": {
            "rows": {"work_orders": 5, "work_order_tasks": 9},
            "first_s": 4.0,
            "second_s": 0.1,
            "baseline_s": 1.0,
            "first_over_baseline": 4.0,
            "second_over_first": 0.025,
            "second_run_created": 0,
            "targets": {
                "first_over_baseline <= 3": False,
                "second_over_first < 0.2": True,
                "second run creates nothing": True,
            },
        },
        "load": {"not_run": "URL 'scheduling_api:today' does not exist yet"},
    }
    md = results_markdown(_doc(size))
    assert "| 4.00× | **MISSED** |" in md
    assert "not run: URL 'scheduling_api:today' does not exist yet" in md


def test_a_pass_with_no_successful_request_is_shown_as_no_figure():
    """No latencies give null in results.json (standard JSON, never NaN) and — in the table, with the errors."""
    from bench.load import LoadResult, percentile
    from bench.scenarios import median

    assert percentile([], 95) is None and median([]) is None and median([None, 2.0, 4.0]) == 3.0
    failed = {"throughput_rps": 0.0, "p50_ms": None, "p95_ms": None, "requests": 0, "errors": 20, "first_error": "503"}
    load = {"clients": 20, "today": {**failed, "throughput_over_baseline": 0.0}}
    load["baseline"] = {**failed, "throughput_rps": 900.0, "errors": 0, "first_error": ""}
    size = {"ahus": 10, "sites": 5, "portfolio": {"ahus": 11}, "load": load}
    doc = _doc(size)
    json.dumps(doc, allow_nan=False)
    md = results_markdown(doc)
    assert "| 10 | today, kept | 20 | 0 | 20 | 0.0 | 0.000 | **MISSED** | — | — | — |" in md
    assert "first errors: today: 503" in md
    assert LoadResult(requests=0, errors=1, seconds=0.1, throughput_rps=0.0, p50_ms=None, p95_ms=None).p95_ms is None
