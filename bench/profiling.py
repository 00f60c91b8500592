"""Optional per-request profiles of the bench server, for finding where server time goes.

``BENCH_PROFILE=<dir>`` (and optionally ``BENCH_PROFILE_PATH=<prefix>``, default ``/api/``) makes the bench
server run each matching request under ``cProfile`` and write ``<dir>/<pid>-<n>.prof``; read them with
``python -m bench.profiling <dir>`` (the merged top 40 by cumulative time). Times are the process's CPU
time, so two runs on a busy machine still compare; a PostgreSQL server's own time is not in them.
Off unless the variable is set; never used by the timed figures of a committed run.
"""

from __future__ import annotations

import cProfile
import itertools
import os
import pstats
import sys
import time
from pathlib import Path

_counter = itertools.count()


class ProfileMiddleware:
    def __init__(self, get_response):
        self.get_response = get_response
        self.folder = Path(os.environ["BENCH_PROFILE"])
        self.folder.mkdir(parents=True, exist_ok=True)
        self.prefix = os.environ.get("BENCH_PROFILE_PATH", "/api/")

    def __call__(self, request):
        if not request.path.startswith(self.prefix):
            return self.get_response(request)
        profile = cProfile.Profile(time.process_time)  # CPU time: comparable on a busy machine
        response = profile.runcall(self.get_response, request)
        profile.dump_stats(self.folder / f"{os.getpid()}-{next(_counter)}.prof")
        return response


def main(argv: list[str]) -> None:
    files = sorted(str(p) for p in Path(argv[0]).glob("*.prof"))
    stats = pstats.Stats(*files)
    stats.sort_stats(argv[1] if len(argv) > 1 else "cumulative").print_stats(int(argv[2]) if len(argv) > 2 else 40)


if __name__ == "__main__":
    main(sys.argv[1:])
