"""The HTTP bench's own arithmetic and load loop (against a real server on 127.0.0.1)."""

from __future__ import annotations

import pytest

from service.bench.http import Server, percentile, process_tree_cpu_s, run_load


def test_nearest_rank_percentile() -> None:
    values = [float(v) for v in range(1, 101)]  # 1..100
    assert percentile(values, 50) == 50.0
    assert percentile(values, 99) == 99.0
    assert percentile(values, 100) == 100.0
    assert percentile([7.0], 99) == 7.0
    with pytest.raises(ValueError):
        percentile([], 50)


@pytest.mark.slow
def test_load_loop_against_a_real_server_counts_requests_and_errors(sqlite_url: str) -> None:
    from service.store.migrations import upgrade

    upgrade(sqlite_url)  # the bench runs on the SQLite default
    with Server(sqlite_url) as server:
        ok = run_load(server.port, lambda i: ("GET", "/healthz", b"", {}), clients=2, total=40,
                      server_pid=server.proc.pid if server.proc else None)
        bad = run_load(server.port, lambda i: ("GET", "/nothing", b"", {}), clients=1, total=5)
    figures = ok.figures()
    assert figures["requests"] == 40 and figures["errors"] == 0 and figures["requests_per_s"] > 0
    assert figures["p50_ms"] <= figures["p99_ms"]
    assert figures["server_cpu_ms_per_request"] >= 0
    assert bad.errors == 5 and bad.first_error.startswith("404")
    assert "server_cpu_ms_per_request" not in bad.figures()  # not asked for


@pytest.mark.slow
def test_server_cpu_counts_the_worker_processes(sqlite_url: str) -> None:
    """With two workers the supervisor itself idles: the CPU of a load is in its child processes."""
    from service.store.migrations import upgrade

    upgrade(sqlite_url)
    with Server(sqlite_url, workers=2) as server:
        assert server.proc is not None
        before = process_tree_cpu_s(server.proc.pid)
        load = run_load(server.port, lambda i: ("GET", "/healthz", b"", {}), clients=2, total=400,
                        server_pid=server.proc.pid)
        supervisor_only = _own_cpu_s(server.proc.pid)
    assert before is not None and load.server_cpu_s is not None
    per_request_ms = load.server_cpu_s * 1e3 / 400
    assert per_request_ms > 0.05  # a health check costs a worker a few tenths of a millisecond
    assert supervisor_only < before + load.server_cpu_s  # the children's time is counted too
    assert process_tree_cpu_s(2**22 + 12345) is None  # no such process


def _own_cpu_s(pid: int) -> float:
    import os
    from pathlib import Path

    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def test_each_upload_run_has_its_own_lots_and_containers() -> None:
    from service.bench._http_scenario import CONTAINERS_PER_LOT, UploadScenario

    sc = UploadScenario(token="t", lots=[f"L{i}" for i in range(6)], sample=b"", runs=3)
    slots = {run: {sc.slot(run, i) for i in range(2 * CONTAINERS_PER_LOT)} for run in range(3)}
    assert all(len(s) == 2 * CONTAINERS_PER_LOT for s in slots.values())  # no container twice in a run
    assert not (slots[0] & slots[1]) and not (slots[1] & slots[2])  # nor across runs
    assert sc.slot(1, 0) == ("L2", 1)
    with pytest.raises(ValueError):
        sc.slot(3, 0)
