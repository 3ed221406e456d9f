"""`bandgate demo` as a subprocess on a free port serves /healthz (the set-up path a newcomer takes)."""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import time
from pathlib import Path

import httpx
import pytest

ROOT = Path(__file__).resolve().parents[1]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@pytest.mark.slow
def test_demo_serves_healthz(tmp_path: Path) -> None:
    port = _free_port()
    env = dict(os.environ, BANDGATE_DATABASE_URL=f"sqlite:///{tmp_path / 'demo.db'}")
    proc = subprocess.Popen(
        [sys.executable, "-m", "service", "demo", "--port", str(port)],
        cwd=tmp_path, env=env, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True,
    )
    try:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            try:
                r = httpx.get(f"http://127.0.0.1:{port}/healthz", timeout=1)
                if r.status_code == 200:
                    break
            except httpx.TransportError:
                pass
            if proc.poll() is not None:
                pytest.fail(f"demo exited early: {proc.stdout.read() if proc.stdout else ''}")
            time.sleep(0.25)
        else:
            pytest.fail("demo did not answer /healthz within 60 s")
        assert r.json()["status"] == "ok"
    finally:
        proc.terminate()
        out, _ = proc.communicate(timeout=20)
    assert f"http://127.0.0.1:{port}/" in out


def test_cli_help_and_version() -> None:
    out = subprocess.run([sys.executable, "-m", "service", "--help"], capture_output=True, text=True, cwd=ROOT)
    assert out.returncode == 0 and "serve" in out.stdout and "migrate" in out.stdout
    for cmd in ("serve", "demo", "migrate", "version"):
        r = subprocess.run([sys.executable, "-m", "service", cmd, "--help"], capture_output=True, text=True, cwd=ROOT)
        assert r.returncode == 0, cmd


def test_serve_on_unmigrated_database_says_which_command_fixes_it(tmp_path: Path) -> None:
    env = dict(os.environ, BANDGATE_DATABASE_URL=f"sqlite:///{tmp_path / 'x.db'}")
    r = subprocess.run([sys.executable, "-m", "service", "serve", "--port", str(_free_port())],
                       capture_output=True, text=True, cwd=ROOT, env=env, timeout=60)
    assert r.returncode == 2
    assert "bandgate migrate" in r.stderr and "Traceback" not in r.stderr
