"""One size of the benchmark, in its own process: ``python -m bench.run --ahus N --sites M --out FILE``.

Started by ``python -m bench`` with ``DATABASE_URL`` pointing at a fresh,
empty throwaway database; migrates it, generates the portfolio, runs every
scenario and writes the figures as JSON.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import time
import traceback
from pathlib import Path


def _guard(results: dict, name: str, fn) -> object:
    from .scenarios import NotRun

    t0 = time.perf_counter()
    print(f"  · {name} …", flush=True)
    try:
        out = fn()
    except NotRun as exc:
        results[name] = {"not_run": str(exc)}
        out = None
    except Exception as exc:  # one broken scenario must not hide the others' figures
        results[name] = {"error": f"{type(exc).__name__}: {exc}"[:500], "trace": traceback.format_exc()[-2000:]}
        out = None
    else:
        results[name] = out
    print(f"    {name} done in {time.perf_counter() - t0:.1f} s", flush=True)
    return out


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="bench.run")
    parser.add_argument("--ahus", type=int, required=True)
    parser.add_argument("--sites", type=int, required=True)
    parser.add_argument("--years", type=int, default=2)
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--sync-forms", type=int, default=1000)
    parser.add_argument("--import-rows", type=int, default=100_000)
    parser.add_argument("--clients", type=int, default=20)
    parser.add_argument("--per-client", type=int, default=25)
    parser.add_argument("--max-seconds", type=float, default=20.0)
    parser.add_argument("--workers", type=int, default=0, help="gunicorn workers; 0: 2 × CPUs + 1")
    parser.add_argument("--out", required=True)
    args = parser.parse_args(argv)

    os.environ["DJANGO_SETTINGS_MODULE"] = "bench.settings"
    import django

    django.setup()
    from django.core.management import call_command

    from . import scenarios
    from .generate import portfolio_generate
    from .load import Server

    out_path = Path(args.out)
    results: dict = {
        "ahus": args.ahus,
        "sites": args.sites,
        "years": args.years,
        "runs": args.runs,
        "database": scenarios.connection_vendor(),
    }
    t0 = time.perf_counter()
    call_command("migrate", verbosity=0, interactive=False)
    results["migrate_s"] = round(time.perf_counter() - t0, 2)
    t0 = time.perf_counter()
    portfolio = portfolio_generate(sites=args.sites, ahus=args.ahus, years=args.years, seed=1)
    results["generate_s"] = round(time.perf_counter() - t0, 2)
    results["portfolio"] = portfolio.counts
    print(f"  generated {portfolio.counts} in {results['generate_s']} s", flush=True)

    _guard(
        results, "work_order_generation", lambda: scenarios.work_order_generation(portfolio=portfolio, runs=args.runs)
    )
    workers = args.workers or 2 * (os.cpu_count() or 1) + 1
    results["gunicorn_workers"] = workers
    try:
        with Server(workers=workers, log_path=out_path.with_suffix(".gunicorn.log")) as server:
            results["assigned_for_today"] = scenarios.today_work_assign(portfolio=portfolio)
            _guard(
                results,
                "load",
                lambda: scenarios.endpoints_under_load(
                    portfolio=portfolio,
                    port=server.port,
                    runs=args.runs,
                    clients=args.clients,
                    per_client=args.per_client,
                    max_seconds=args.max_seconds,
                ),
            )
            # After the load figures: the copies made for the forms would otherwise sit on the board.
            pairs = _guard(
                results,
                "sync_prepare",
                lambda: scenarios.sync_forms_prepare(
                    portfolio=portfolio, port=server.port, count=args.sync_forms, tag="a"
                ),
            )
            if pairs:
                _guard(results, "sync", lambda: scenarios.sync_forms(port=server.port, pairs=pairs))
            elif "sync" not in results:
                results["sync"] = results.get("sync_prepare") or {"not_run": "no forms prepared"}
            results.pop("sync_prepare", None)
    except RuntimeError as exc:
        results.setdefault("load", {"error": str(exc)})
        results.setdefault("sync", {"error": str(exc)})

    from inspections.models import Inspection

    # The inspection report of a form synced just now (with evaluations), else of a history visit.
    latest = Inspection.objects.filter(organisation_id=portfolio.main.organisation_id).order_by("-pk").first()
    wo_public_id = str(latest.work_order.public_id) if latest else None
    _guard(
        results,
        "reports",
        lambda: scenarios.reports_render(portfolio=portfolio, runs=args.runs, work_order_public_id=wo_public_id),
    )
    _guard(results, "pwa_shell", lambda: scenarios.pwa_shell(portfolio=portfolio))
    _guard(
        results,
        "registry_import",
        lambda: scenarios.registry_import(portfolio=portfolio, runs=args.runs, rows=args.import_rows),
    )
    out_path.write_text(json.dumps(results, indent=1, default=str))
    return 0


if __name__ == "__main__":
    sys.exit(main())
