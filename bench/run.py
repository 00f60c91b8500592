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


def _trace_text() -> str:
    """The current exception's traceback with this machine's folders left out (paths relative to the project,
    library paths from their package): committed results name no path of the machine that ran them."""
    import site
    import sysconfig

    text = traceback.format_exc()
    roots = [*site.getsitepackages(), sysconfig.get_paths()["stdlib"], str(Path(__file__).resolve().parent.parent)]
    for root in sorted(roots, key=len, reverse=True):
        text = text.replace(root.rstrip("/") + "/", "")
    return text[-2000:]


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
        results[name] = {"error": f"{type(exc).__name__}: {exc}"[:500], "trace": _trace_text()}
        out = None
    else:
        results[name] = out
    print(f"    {name} done in {time.perf_counter() - t0:.1f} s", flush=True)
    return out


SCENARIOS = (
    "generation",
    "load",
    "sync",
    "mixed_day",
    "reports",
    "pwa_shell",
    "registry_import",
    "trend_ingest",
)
RESULT_KEYS = {"generation": "work_order_generation"}  # a scenario's figures in results.json, where named apart


def scenarios_chosen(text: str) -> set[str]:
    """The scenario names of a comma-separated list; an unknown name is refused, naming the known ones."""
    names = {n.strip() for n in text.split(",") if n.strip()}
    unknown = sorted(names - set(SCENARIOS))
    if unknown or not names:
        raise SystemExit(f"--scenarios={text!r}: unknown {unknown or 'empty'}; choose from {', '.join(SCENARIOS)}")
    return names


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
    parser.add_argument("--scenarios", default=",".join(SCENARIOS), help="comma-separated, of " + ", ".join(SCENARIOS))
    parser.add_argument("--day-seconds", type=float, default=10.0)
    parser.add_argument("--day-writers", type=int, default=3)
    parser.add_argument("--day-forms", type=int, default=1500)
    parser.add_argument("--day-orgs", type=int, default=2)
    parser.add_argument("--out", required=True)
    args = parser.parse_args(argv)
    chosen = scenarios_chosen(args.scenarios)

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
    for name in sorted(set(SCENARIOS) - chosen):
        results[RESULT_KEYS.get(name, name)] = {"not_run": f"not chosen (--scenarios {args.scenarios})"}
    t0 = time.perf_counter()
    call_command("migrate", verbosity=0, interactive=False)
    results["migrate_s"] = round(time.perf_counter() - t0, 2)
    t0 = time.perf_counter()
    portfolio = portfolio_generate(sites=args.sites, ahus=args.ahus, years=args.years, seed=1)
    results["generate_s"] = round(time.perf_counter() - t0, 2)
    results["portfolio"] = portfolio.counts
    print(f"  generated {portfolio.counts} in {results['generate_s']} s", flush=True)

    served = chosen & {"load", "sync"}
    if "generation" in chosen:
        _guard(
            results,
            "work_order_generation",
            lambda: scenarios.work_order_generation(portfolio=portfolio, runs=args.runs),
        )
    elif chosen & {"load", "sync", "mixed_day"}:  # they read and write the generated work, made untimed here
        from accounts.models import Organisation
        from scheduling.engine import work_orders_generate

        work_orders_generate(
            organisation=Organisation.objects.get(pk=portfolio.main.organisation_id), today=portfolio.today
        )
    workers = args.workers or 2 * (os.cpu_count() or 1) + 1
    try:
        if served:
            results["gunicorn_workers"] = workers
            with Server(workers=workers, log_path=out_path.with_suffix(".gunicorn.log")) as server:
                _served(results, args, chosen, portfolio=portfolio, port=server.port)
    except RuntimeError as exc:
        for name in sorted(served):
            results.setdefault(name, {"error": str(exc)})

    from inspections.models import Inspection

    # The inspection report of a form synced just now (with evaluations), else of a history visit.
    latest = Inspection.objects.filter(organisation_id=portfolio.main.organisation_id).order_by("-pk").first()
    wo_public_id = str(latest.work_order.public_id) if latest else None
    if "reports" in chosen:
        _guard(
            results,
            "reports",
            lambda: scenarios.reports_render(portfolio=portfolio, runs=args.runs, work_order_public_id=wo_public_id),
        )
    if "pwa_shell" in chosen:
        _guard(results, "pwa_shell", lambda: scenarios.pwa_shell(portfolio=portfolio))
    if "registry_import" in chosen:
        _guard(
            results,
            "registry_import",
            lambda: scenarios.registry_import(portfolio=portfolio, runs=args.runs, rows=args.import_rows),
        )
    if "mixed_day" in chosen:
        # Last, in a server of its own: it adds organisations, forms and assignments that no other figure sees.
        try:
            with Server(workers=workers, log_path=out_path.with_suffix(".gunicorn.log")) as server:
                results["gunicorn_workers"] = workers
                _guard(results, "mixed_day", lambda: _mixed_day(args, portfolio=portfolio, port=server.port))
        except RuntimeError as exc:
            results.setdefault("mixed_day", {"error": str(exc)})
    if "trend_ingest" in chosen:
        # After the mixed day: its points, faults and proposed work are seen by no other figure.
        _guard(results, "trend_ingest", lambda: _trend_ingest(args, portfolio=portfolio))
    out_path.write_text(json.dumps(results, indent=1, default=str))
    return 0


def _trend_ingest(args, *, portfolio) -> dict:
    """One day of 15-minute trends of 20 points on every unit of the main organisation, the site-local yesterday."""
    import datetime as dt

    from .trends import trend_ingest

    day = portfolio.today - dt.timedelta(days=1)
    return trend_ingest(ahu_ids=portfolio.main.ahu_ids, day=day, runs=args.runs)


def _mixed_day(args, *, portfolio, port: int) -> dict:
    from .mixed_day import mixed_day

    return mixed_day(
        portfolio=portfolio,
        port=port,
        runs=args.runs,
        clients=args.clients,
        writers=args.day_writers,
        seconds=args.day_seconds,
        forms=args.day_forms,
        extra_orgs=args.day_orgs,
        years=args.years,
    )


def _served(results: dict, args, chosen: set[str], *, portfolio, port: int) -> None:
    """The load and sync scenarios, in one gunicorn server."""
    from . import scenarios

    results["assigned_for_today"] = scenarios.today_work_assign(portfolio=portfolio)
    if "load" in chosen:
        _guard(
            results,
            "load",
            lambda: scenarios.endpoints_under_load(
                portfolio=portfolio,
                port=port,
                runs=args.runs,
                clients=args.clients,
                per_client=args.per_client,
                max_seconds=args.max_seconds,
            ),
        )
    if "sync" in chosen:
        # After the load figures: the copies made for the forms would otherwise sit on the board.
        pairs = _guard(
            results,
            "sync_prepare",
            lambda: scenarios.sync_forms_prepare(portfolio=portfolio, port=port, count=args.sync_forms, tag="a"),
        )
        if pairs:
            _guard(results, "sync", lambda: scenarios.sync_forms(port=port, pairs=pairs))
        elif "sync" not in results:
            results["sync"] = results.get("sync_prepare") or {"not_run": "no forms prepared"}
        results.pop("sync_prepare", None)


if __name__ == "__main__":
    sys.exit(main())
