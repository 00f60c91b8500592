"""A gunicorn server on 127.0.0.1 and a bounded, threaded load loop against it (http.client only)."""

from __future__ import annotations

import http.client
import json
import math
import os
import signal
import socket
import statistics
import subprocess
import sys
import threading
import time
from dataclasses import dataclass
from pathlib import Path

HOST = "127.0.0.1"
START_SECONDS = 180
ROOT = Path(__file__).resolve().parent.parent


def free_port() -> int:
    with socket.socket() as s:
        s.bind((HOST, 0))
        return s.getsockname()[1]


class Server:
    """gunicorn serving ``bench.wsgi`` against the run's database; stopped by its own process id."""

    def __init__(self, *, workers: int, log_path: Path):
        self.port = free_port()
        self.workers = workers
        self.log_path = log_path
        self.proc: subprocess.Popen | None = None

    def __enter__(self) -> Server:
        env = {**os.environ, "DJANGO_SETTINGS_MODULE": "bench.settings"}
        self.log = open(self.log_path, "ab")  # closed in __exit__
        gunicorn = [
            sys.executable,
            "-m",
            "gunicorn",
            "bench.wsgi:application",
            "--bind",
            f"{HOST}:{self.port}",
            "--workers",
            str(self.workers),
            "--worker-class",
            "sync",
            "--timeout",
            "120",
            "--backlog",
            "256",
            "--log-level",
            "warning",
        ]
        self.proc = subprocess.Popen(gunicorn, cwd=ROOT, env=env, stdout=self.log, stderr=self.log)
        # Workers import the whole app before they answer; on a busy shared machine that can take a minute or more.
        deadline = time.monotonic() + START_SECONDS
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                raise RuntimeError(f"gunicorn exited with {self.proc.returncode}; see {self.log_path}")
            try:
                status, _body, _t = request("GET", self.port, "/bench/baseline/")
                if status == 200:
                    return self
            except OSError:
                pass
            time.sleep(0.2)
        self.__exit__(None, None, None)
        raise RuntimeError(f"gunicorn did not answer within {START_SECONDS} s; see {self.log_path}")

    def __exit__(self, *exc) -> None:
        if self.proc and self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(timeout=30)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        self.log.close()


def request(
    method: str,
    port: int,
    path: str,
    *,
    token: str | None = None,
    body: bytes | None = None,
    timeout: float = 60,
    cookie: str | None = None,
) -> tuple[int, bytes, float]:
    """One request on a fresh connection (gunicorn's sync workers close after each); returns status, body, s.

    ``token`` signs in as the API does; ``cookie`` (``sessionid=…``) as a browser does, for a page."""
    headers = {"Accept": "text/html" if cookie else "application/json", "Host": HOST}
    if token:
        headers["Authorization"] = f"Token {token}"
    if cookie:
        headers["Cookie"] = cookie
    if body is not None:
        headers["Content-Type"] = "application/json"
    t0 = time.perf_counter()
    conn = http.client.HTTPConnection(HOST, port, timeout=timeout)
    try:
        conn.request(method, path, body=body, headers=headers)
        resp = conn.getresponse()
        data = resp.read()
    finally:
        conn.close()
    return resp.status, data, time.perf_counter() - t0


def get_json(port: int, path: str, *, token: str | None = None, timeout: float = 60):
    status, data, _ = request("GET", port, path, token=token, timeout=timeout)
    if status != 200:
        raise RuntimeError(f"GET {path} answered {status}: {data[:300]!r}")
    return json.loads(data)


@dataclass
class LoadResult:
    requests: int
    errors: int
    seconds: float
    throughput_rps: float
    p50_ms: float | None  # None when no request succeeded
    p95_ms: float | None
    first_error: str = ""


def percentile(values: list[float], pct: float) -> float | None:
    if not values:
        return None
    ordered = sorted(values)
    k = max(0, min(len(ordered) - 1, math.ceil(pct / 100 * len(ordered)) - 1))
    return ordered[k]


def load_loop(
    *,
    port: int,
    path: str,
    tokens: list[str | None],
    clients: int = 20,
    per_client: int = 25,
    max_seconds: float = 30.0,
) -> LoadResult:
    """``clients`` threads, each sending up to ``per_client`` GETs (stopping at ``max_seconds``)."""
    latencies: list[float] = []
    errors: list[str] = []
    lock = threading.Lock()
    start_gate = threading.Event()
    deadline = [0.0]

    def client(index: int) -> None:
        token = tokens[index % len(tokens)]
        start_gate.wait()
        for _ in range(per_client):
            if time.perf_counter() > deadline[0]:
                return
            try:
                status, data, took = request("GET", port, path, token=token)
            except OSError as exc:
                with lock:
                    errors.append(f"{type(exc).__name__}: {exc}")
                continue
            with lock:
                if status == 200:
                    latencies.append(took)
                else:
                    errors.append(f"{status}: {data[:200]!r}")

    threads = [threading.Thread(target=client, args=(i,), daemon=True) for i in range(clients)]
    for t in threads:
        t.start()
    t0 = time.perf_counter()
    deadline[0] = t0 + max_seconds
    start_gate.set()
    for t in threads:
        t.join(max_seconds + 120)
    wall = time.perf_counter() - t0
    return LoadResult(
        requests=len(latencies),
        errors=len(errors),
        seconds=round(wall, 3),
        throughput_rps=round(len(latencies) / wall, 2) if wall > 0 else 0.0,
        p50_ms=round(statistics.median(latencies) * 1000, 1) if latencies else None,
        p95_ms=round(percentile(latencies, 95) * 1000, 1) if latencies else None,
        first_error=errors[0] if errors else "",
    )
