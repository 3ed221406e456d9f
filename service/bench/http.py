"""HTTP end to end: a real server on 127.0.0.1, a 3,600-point spectrum uploaded and evaluated.

The server is `uvicorn` in a subprocess on the SQLite default (WAL + synchronous=FULL), run once with
one worker process and once with two (as `deploy/` runs it, `bandgate serve --workers 2`), so the
figures include the socket, the multipart parse, the reader, the evaluation, the stored record with
its audit events, and the response. `GET /healthz` is measured on the same server in the same run
as the ceiling: the upload path should reach at least a tenth of its throughput. Each load also
reports the server's own CPU time per request (all its processes, from /proc), which moves far less
than throughput on a shared machine. Each load is bounded by a request count and a wall-clock
limit; traffic goes to loopback only.
"""

from __future__ import annotations

import http.client
import os
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time
import uuid
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from service.bench import BenchReport

HOST = "127.0.0.1"
HEALTH_REQUESTS = 1500
UPLOAD_REQUESTS = 120
TIME_LIMIT_S = 20.0
WORKER_SETTINGS = (1, 2)

Request = tuple[str, str, bytes, dict[str, str]]  # method, path, body, headers


@dataclass
class LoadResult:
    clients: int
    latencies_ms: list[float] = field(default_factory=list)
    errors: int = 0
    first_error: str = ""
    wall_s: float = 0.0
    server_cpu_s: float | None = None  # the server's CPU time (all its processes) during the load

    def figures(self) -> dict[str, Any]:
        lat = sorted(self.latencies_ms)
        done = len(lat)
        cpu = (round(self.server_cpu_s * 1e3 / (done + self.errors), 3)
               if self.server_cpu_s is not None and done + self.errors else None)
        return {
            "clients": self.clients,
            "requests": done,
            "errors": self.errors,
            "requests_per_s": round(done / self.wall_s, 1) if self.wall_s else 0.0,
            "p50_ms": round(percentile(lat, 50), 2) if lat else None,
            "p99_ms": round(percentile(lat, 99), 2) if lat else None,
            **({"server_cpu_ms_per_request": cpu} if cpu is not None else {}),
            **({"first_error": self.first_error} if self.first_error else {}),
        }


def percentile(sorted_values: list[float], q: float) -> float:
    """Nearest-rank percentile (the smallest value with at least q % of the values at or below it)."""
    if not sorted_values:
        raise ValueError("no values")
    rank = max(1, -(-len(sorted_values) * q // 100))  # ceil(n*q/100)
    return sorted_values[int(rank) - 1]


def process_tree_cpu_s(pid: int) -> float | None:
    """CPU seconds (user + system) used so far by ``pid`` and its descendants; None off Linux."""
    tick = os.sysconf("SC_CLK_TCK") if hasattr(os, "sysconf") else 100
    total, stack, seen = 0.0, [pid], set()
    while stack:
        p = stack.pop()
        if p in seen:
            continue
        seen.add(p)
        try:
            fields = Path(f"/proc/{p}/stat").read_text().rsplit(")", 1)[1].split()
            tasks = os.listdir(f"/proc/{p}/task")
        except (OSError, IndexError):
            if p == pid:
                return None
            continue
        total += (int(fields[11]) + int(fields[12])) / tick  # utime, stime of all the process's threads
        for t in tasks:
            try:
                stack.extend(int(c) for c in Path(f"/proc/{p}/task/{t}/children").read_text().split())
            except OSError:
                pass
    return total


def free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind((HOST, 0))
        return int(s.getsockname()[1])


class Server:
    """`uvicorn service.web.asgi:app` on a free loopback port, for the life of a `with` block."""

    def __init__(self, database_url: str, *, workers: int = 1, extra_env: dict[str, str] | None = None) -> None:
        self.port = free_port()
        self.database_url = database_url
        self.workers = workers
        self.extra_env = extra_env or {}
        self.proc: subprocess.Popen[bytes] | None = None

    def __enter__(self) -> "Server":
        env = {**os.environ, "BANDGATE_DATABASE_URL": self.database_url, **self.extra_env}
        root = str(Path(__file__).resolve().parents[2])
        env["PYTHONPATH"] = root + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
        self.proc = subprocess.Popen(
            [sys.executable, "-m", "uvicorn", "service.web.asgi:app", "--factory", "--host", HOST,
             "--port", str(self.port), "--workers", str(self.workers), "--log-level", "warning",
             "--no-access-log"],
            env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
        )
        deadline = time.monotonic() + 30
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                err = self.proc.stderr.read().decode(errors="replace") if self.proc.stderr else ""
                raise RuntimeError(f"the server exited at start-up: {err[-2000:]}")
            try:
                status, _ = request_once(self.port, ("GET", "/healthz", b"", {}))
                if status == 200:
                    return self
            except OSError:
                pass
            time.sleep(0.1)
        self.__exit__(None, None, None)
        raise RuntimeError("the server did not answer /healthz within 30 s")

    def __exit__(self, *_exc: object) -> None:
        if self.proc is not None and self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        if self.proc is not None and self.proc.stderr:
            self.proc.stderr.close()


def request_once(port: int, req: Request, conn: http.client.HTTPConnection | None = None) -> tuple[int, bytes]:
    own = conn is None
    conn = conn or http.client.HTTPConnection(HOST, port, timeout=30)
    try:
        method, path, body, headers = req
        conn.request(method, path, body=body or None, headers=headers)
        resp = conn.getresponse()
        return resp.status, resp.read()
    finally:
        if own:
            conn.close()


def run_load(
    port: int, make_request: Callable[[int], Request], *, clients: int, total: int,
    time_limit_s: float = TIME_LIMIT_S, expect: int = 200, server_pid: int | None = None,
) -> LoadResult:
    """Send ``total`` requests from ``clients`` threads (keep-alive connections), stop at the time limit.

    With ``server_pid``, the server's CPU time over the load is recorded too.
    """
    result = LoadResult(clients=clients)
    lock = threading.Lock()
    counter = iter(range(total))
    deadline = time.monotonic() + time_limit_s

    def worker() -> None:
        conn = http.client.HTTPConnection(HOST, port, timeout=30)
        try:
            while time.monotonic() < deadline:
                with lock:
                    i = next(counter, None)
                if i is None:
                    return
                req = make_request(i)
                t0 = time.perf_counter()
                try:
                    status, body = request_once(port, req, conn)
                except (OSError, http.client.HTTPException) as exc:
                    status, body = 0, repr(exc).encode()
                    conn.close()
                    conn = http.client.HTTPConnection(HOST, port, timeout=30)
                elapsed = (time.perf_counter() - t0) * 1e3
                with lock:
                    if status == expect:
                        result.latencies_ms.append(elapsed)
                    else:
                        result.errors += 1
                        if not result.first_error:
                            result.first_error = f"{status}: {body[:300].decode(errors='replace')}"
        finally:
            conn.close()

    threads = [threading.Thread(target=worker, daemon=True) for _ in range(clients)]
    cpu0 = process_tree_cpu_s(server_pid) if server_pid is not None else None
    t0 = time.perf_counter()
    for th in threads:
        th.start()
    for th in threads:
        th.join(time_limit_s + 60)
    result.wall_s = time.perf_counter() - t0
    cpu1 = process_tree_cpu_s(server_pid) if server_pid is not None else None
    if cpu0 is not None and cpu1 is not None:
        result.server_cpu_s = cpu1 - cpu0
    return result


def multipart(fields: dict[str, str], files: dict[str, tuple[str, bytes, str]]) -> tuple[bytes, str]:
    """A multipart/form-data body (fresh boundary) and its content type."""
    boundary = uuid.uuid4().hex
    parts: list[bytes] = []
    for name, value in fields.items():
        parts.append(
            f'--{boundary}\r\nContent-Disposition: form-data; name="{name}"\r\n\r\n{value}\r\n'.encode()
        )
    for name, (filename, data, ctype) in files.items():
        parts.append(
            f'--{boundary}\r\nContent-Disposition: form-data; name="{name}"; filename="{filename}"\r\n'
            f"Content-Type: {ctype}\r\n\r\n".encode() + data + b"\r\n"
        )
    parts.append(f"--{boundary}--\r\n".encode())
    return b"".join(parts), f"multipart/form-data; boundary={boundary}"


def _health_request(_i: int) -> Request:
    return ("GET", "/healthz", b"", {})


def _fresh_sqlite() -> str:
    from service.store.migrations import upgrade

    url = f"sqlite:///{Path(tempfile.mkdtemp(prefix='bandgate-bench-http-')) / 'bench.db'}"
    upgrade(url)
    return url


def _in_process_breakdown(url: str, scenario: Any, repeats: int = 15) -> BenchReport:
    """Where an upload's time goes: the reader alone, and the whole use case without HTTP (same data)."""
    from service import services as uc
    from service.services import evaluator
    from service.store.engine import make_engine

    engine = make_engine(url)
    try:
        reads, calls = [], []
        for _ in range(repeats):
            t0 = time.perf_counter()
            evaluator.read_spectrum(scenario.sample, file_name="bench-sample-synthetic.csv")
            reads.append((time.perf_counter() - t0) * 1e3)
        tech = uc.get_actor(engine, "bench.tech")
        for i in range(10, 10 + repeats):  # the first warm-up run's spare slots (it took the first four)
            code, container = scenario.slot(0, i)
            t0 = time.perf_counter()
            uc.record_measurement(engine, tech, lot_code=code, container=container, instrument_code="BENCH-FTIR",
                                  data=scenario.sample, file_name="bench-sample-synthetic.csv")
            calls.append((time.perf_counter() - t0) * 1e3)
    finally:
        engine.dispose()
    return BenchReport("in process, no HTTP: read the CSV / record_measurement use case (median ms)", {
        "read_ms": round(statistics.median(reads), 2), "use_case_ms": round(statistics.median(calls), 2),
        "repeats": repeats})


def _measure(scenario: Any, url: str, workers: int, first_run: int) -> dict[tuple[str, int], LoadResult]:
    """healthz with 1 and 4 clients, a warm-up, then uploads with 1 and 4 clients, on one server."""
    results: dict[tuple[str, int], LoadResult] = {}
    with Server(url, workers=workers) as server:
        pid = server.proc.pid if server.proc is not None else None
        for clients in (1, 4):
            results[("healthz", clients)] = run_load(
                server.port, _health_request, clients=clients, total=HEALTH_REQUESTS, server_pid=pid)
        # warm-up: each worker's first uploads pay imports and the reference and library caches (not timed)
        run_load(server.port, scenario.request_factory(first_run), clients=2 * workers, total=4 * workers,
                 expect=201)
        for k, clients in enumerate((1, 4), start=1):
            results[("upload", clients)] = run_load(
                server.port, scenario.request_factory(first_run + k), clients=clients, total=UPLOAD_REQUESTS,
                expect=201, server_pid=pid)
    return results


def cases() -> list[BenchReport]:
    from service.bench._http_scenario import prepare_upload_scenario

    url = _fresh_sqlite()
    scenario = prepare_upload_scenario(url, uploads_per_run=UPLOAD_REQUESTS, runs=3 * len(WORKER_SETTINGS))
    measured = {workers: _measure(scenario, url, workers, first_run=3 * k)
                for k, workers in enumerate(WORKER_SETTINGS)}
    reports: list[BenchReport] = [_in_process_breakdown(url, scenario)]
    for workers, results in measured.items():
        for clients in (1, 4):
            health = results[("healthz", clients)].figures()
            up = results[("upload", clients)].figures()
            up["share_of_ceiling"] = round(up["requests_per_s"] / (health["requests_per_s"] or 1.0), 3)
            if health.get("server_cpu_ms_per_request") and up.get("server_cpu_ms_per_request"):
                up["cpu_cost_vs_healthz"] = round(up["server_cpu_ms_per_request"]
                                                  / health["server_cpu_ms_per_request"], 1)
            where = f"{workers} worker(s), {clients} client(s)"
            reports.append(BenchReport(f"GET /healthz, {where} (ceiling)", health))
            reports.append(BenchReport(
                f"POST measurement (3,600-point spectrum: parse, read, evaluate, store, audit), {where}",
                up, aim=">= 0.1 of the /healthz throughput in the same run; no errors"))
    return reports
