"""``python -m bench [--large] [--runs N] [--scenarios a,b]`` (``make bench``): every scenario at two sizes.

Each size runs in its own process against its own throwaway database: a
temporary SQLite file by default, or — when ``DATABASE_URL`` names a
PostgreSQL server — a ``plenum_bench_<pid>`` database created on that server and
dropped afterwards. The developer's own database is never touched. Results go
to ``bench/results.json`` and ``bench/results.md``.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import platform
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from urllib.parse import urlsplit, urlunsplit

from .results import results_markdown
from .run import SCENARIOS, scenarios_chosen

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
SMALL = [50, 200]
LARGE = [500, 5000]
# One database per harness process, so two people benchmarking on one server never drop each other's.
PG_BENCH_DB = f"plenum_bench_{os.getpid()}"


def sites_for(ahus: int) -> int:
    return max(5, ahus // 10)


def _pg_admin(url: str):
    """A connection to the server's maintenance database: DATABASE_URL's own database need not exist."""
    import psycopg

    return psycopg.connect(_pg_url(url, "postgres"), autocommit=True)


def _pg_url(url: str, dbname: str) -> str:
    parts = urlsplit(url)
    return urlunsplit((parts.scheme, parts.netloc, "/" + dbname, parts.query, parts.fragment))


class Database:
    """A fresh database for one size; removed on exit."""

    def __init__(self, *, server_url: str | None, scratch: Path):
        self.server_url = server_url
        self.scratch = scratch

    @property
    def vendor(self) -> str:
        return "postgresql" if self.server_url else "sqlite"

    def __enter__(self) -> str:
        if self.server_url:
            with _pg_admin(self.server_url) as conn:
                conn.execute(f'DROP DATABASE IF EXISTS "{PG_BENCH_DB}" WITH (FORCE)')
                conn.execute(f'CREATE DATABASE "{PG_BENCH_DB}"')
            return _pg_url(self.server_url, PG_BENCH_DB)
        path = self.scratch / "bench.sqlite3"
        path.unlink(missing_ok=True)
        return f"sqlite:///{path}"

    def __exit__(self, *exc) -> None:
        if self.server_url:
            with _pg_admin(self.server_url) as conn:
                conn.execute(f'DROP DATABASE IF EXISTS "{PG_BENCH_DB}" WITH (FORCE)')
        else:
            for suffix in ("", "-wal", "-shm", "-journal"):
                (self.scratch / f"bench.sqlite3{suffix}").unlink(missing_ok=True)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m bench", description=__doc__.split("\n\n")[0])
    parser.add_argument("--large", action="store_true", help=f"sizes {LARGE} units instead of {SMALL}")
    parser.add_argument("--sizes", help="comma-separated unit counts, e.g. 50,200 (overrides --large)")
    parser.add_argument("--runs", type=int, default=3, help="runs per figure; the median is reported")
    parser.add_argument("--sync-forms", type=int, default=1000)
    parser.add_argument("--import-rows", type=int, default=100_000, help="rows of the registry import file")
    parser.add_argument("--years", type=int, default=2)
    parser.add_argument(
        "--clients", type=int, default=20, help="concurrent clients of the load scenario; readers of the mixed day"
    )
    parser.add_argument("--per-client", type=int, default=25, help="requests each client sends (bounded)")
    parser.add_argument("--max-seconds", type=float, default=20.0, help="time bound of one load loop")
    parser.add_argument(
        "--scenarios",
        default=",".join(SCENARIOS),
        help=f"comma-separated scenarios to run (default all: {','.join(SCENARIOS)})",
    )
    parser.add_argument("--day-seconds", type=float, default=10.0, help="mixed day: seconds of each pass")
    parser.add_argument("--day-writers", type=int, default=3, help="mixed day: continuous writer clients")
    parser.add_argument(
        "--day-forms", type=int, default=1500, help="mixed day: sync forms prepared (a writer running out fails)"
    )
    parser.add_argument("--day-orgs", type=int, default=2, help="mixed day: organisations added to the two")
    parser.add_argument("--out", default=str(HERE), help="folder for results.md and results.json")
    args = parser.parse_args(argv)
    scenarios_chosen(args.scenarios)  # an unknown name stops here, before any database is made

    sizes = [int(s) for s in args.sizes.split(",")] if args.sizes else (LARGE if args.large else SMALL)
    env_url = os.environ.get("DATABASE_URL", "")
    server_url = env_url if env_url.startswith(("postgres://", "postgresql://")) else None
    out_dir = Path(args.out)
    out_dir.mkdir(parents=True, exist_ok=True)
    scratch = Path(tempfile.mkdtemp(prefix="plenum-bench-"))
    started = time.perf_counter()
    load_before = os.getloadavg()[0]
    runs = []
    try:
        for ahus in sizes:
            print(f"bench: {ahus} units on {'PostgreSQL' if server_url else 'SQLite'} …", flush=True)
            child_out = scratch / f"size-{ahus}.json"
            with Database(server_url=server_url, scratch=scratch) as db_url:
                env = {
                    **os.environ,
                    "DATABASE_URL": db_url,
                    "BENCH_SCRATCH": str(scratch),
                    "DJANGO_SETTINGS_MODULE": "bench.settings",
                    "DATABASE_CONN_MAX_AGE": "60",
                }
                cmd = [
                    sys.executable,
                    "-m",
                    "bench.run",
                    "--ahus",
                    str(ahus),
                    "--sites",
                    str(sites_for(ahus)),
                    "--years",
                    str(args.years),
                    "--runs",
                    str(args.runs),
                    "--sync-forms",
                    str(args.sync_forms),
                    "--import-rows",
                    str(args.import_rows),
                    "--clients",
                    str(args.clients),
                    "--per-client",
                    str(args.per_client),
                    "--max-seconds",
                    str(args.max_seconds),
                    "--scenarios",
                    args.scenarios,
                    "--day-seconds",
                    str(args.day_seconds),
                    "--day-writers",
                    str(args.day_writers),
                    "--day-forms",
                    str(args.day_forms),
                    "--day-orgs",
                    str(args.day_orgs),
                    "--out",
                    str(child_out),
                ]
                t0 = time.perf_counter()
                proc = subprocess.run(cmd, cwd=ROOT, env=env, check=False)
                took = round(time.perf_counter() - t0, 1)
            if proc.returncode != 0 or not child_out.exists():
                runs.append({"ahus": ahus, "sites": sites_for(ahus), "error": f"bench.run exited {proc.returncode}"})
            else:
                result = json.loads(child_out.read_text())
                result["wall_s"] = took
                runs.append(result)
            log = child_out.with_suffix(".gunicorn.log")
            if log.exists() and log.stat().st_size:
                print(f"bench: gunicorn said:\n{log.read_text()[-2000:]}", flush=True)
    finally:
        shutil.rmtree(scratch, ignore_errors=True)

    document = {
        "generated_at": dt.datetime.now(dt.UTC).replace(microsecond=0).isoformat(),
        "database": "postgresql" if server_url else "sqlite",
        "machine": {
            "cpus": os.cpu_count(),
            "python": platform.python_version(),
            "platform": platform.platform(),
            # Other work on a shared machine weighs on every figure: the 1-minute load average at start and end.
            "load_average": [round(load_before, 1), round(os.getloadavg()[0], 1)],
        },
        "runs_per_figure": args.runs,
        "total_s": round(time.perf_counter() - started, 1),
        "sizes": runs,
    }
    (out_dir / "results.json").write_text(json.dumps(document, indent=1, default=str) + "\n")
    (out_dir / "results.md").write_text(results_markdown(document))
    print(f"bench: wrote {out_dir / 'results.md'} and results.json in {document['total_s']} s", flush=True)
    failed = failures(document)
    if failed:
        print("bench: FAILED —\n  " + "\n  ".join(failed), file=sys.stderr, flush=True)
        return 1
    return 0


def failures(document: dict) -> list[str]:
    """Each size that did not finish and each scenario that raised (a wrong outcome, a crash), in words."""
    out = []
    for size in document["sizes"]:
        if "error" in size:
            out.append(f"{size['ahus']} units: {size['error']}")
            continue
        for name, section in size.items():
            if isinstance(section, dict) and "error" in section:
                out.append(f"{size['ahus']} units, {name}: {section['error']}")
    return out


if __name__ == "__main__":
    sys.exit(main())
