"""The HTTP bench's own arithmetic and load loop (against a real server on 127.0.0.1)."""

from __future__ import annotations

import pytest

from service.bench.http import Server, percentile, run_load


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
        ok = run_load(server.port, lambda i: ("GET", "/healthz", b"", {}), clients=2, total=40)
        bad = run_load(server.port, lambda i: ("GET", "/nothing", b"", {}), clients=1, total=5)
    figures = ok.figures()
    assert figures["requests"] == 40 and figures["errors"] == 0 and figures["requests_per_s"] > 0
    assert figures["p50_ms"] <= figures["p99_ms"]
    assert bad.errors == 5 and bad.first_error.startswith("404")
