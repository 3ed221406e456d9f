"""A real server (uvicorn subprocess on a free 127.0.0.1 port) and a real headless Chromium.

Chromium is Debian's package (``BANDGATE_CHROMIUM`` or ``chromium`` on the PATH), launched by
Playwright with ``executable_path``; Playwright never downloads a browser here. Without Chromium the
browser tests skip with a reason, unless ``BANDGATE_REQUIRE_BROWSER=1`` (CI), where they fail.
"""

from __future__ import annotations

import os
import shutil
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[3]
OUTPUT = REPO / "test-output" / "browser"
CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                  "--disable-component-update", "--disable-sync"]


def chromium_path() -> str:
    path = os.environ.get("BANDGATE_CHROMIUM") or shutil.which("chromium") or shutil.which("chromium-browser")
    if not path or not Path(path).exists():
        if os.environ.get("BANDGATE_REQUIRE_BROWSER") == "1":
            pytest.fail("BANDGATE_REQUIRE_BROWSER=1 but no Chromium was found (install Debian's `chromium` "
                        "or set BANDGATE_CHROMIUM)")
        pytest.skip("no Chromium: install Debian's `chromium` package or set BANDGATE_CHROMIUM to run browser tests")
    try:
        import playwright.sync_api  # noqa: F401
    except ImportError:
        if os.environ.get("BANDGATE_REQUIRE_BROWSER") == "1":
            pytest.fail("BANDGATE_REQUIRE_BROWSER=1 but the playwright package is not installed")
        pytest.skip("the playwright Python package is not installed (pip install '.[test]')")
    return path


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@contextmanager
def live_server(db_url: str, *, secret: str, log: Path) -> Iterator[str]:
    """Serve the app from ``db_url`` (already migrated and seeded) until the block ends."""
    port = free_port()
    env = {**os.environ, "BANDGATE_DATABASE_URL": db_url, "BANDGATE_SECRET_KEY": secret, "BANDGATE_MODE": "dev",
           "PYTHONPATH": str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", "")}
    log.parent.mkdir(parents=True, exist_ok=True)
    out = log.open("wb")
    proc = subprocess.Popen([sys.executable, "-m", "uvicorn", "service.web.asgi:app", "--factory",
                             "--host", "127.0.0.1", "--port", str(port), "--log-level", "warning"],
                            cwd=REPO, env=env, stdout=out, stderr=subprocess.STDOUT)
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 30
        while True:
            try:
                with urllib.request.urlopen(base + "/healthz", timeout=1) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            if proc.poll() is not None or time.monotonic() > deadline:
                out.flush()
                pytest.fail(f"the server did not start; its log:\n{log.read_text(errors='replace')[-3000:]}")
            time.sleep(0.2)
        yield base
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait()
        out.close()


@contextmanager
def chromium(executable: str) -> Iterator[object]:
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=executable, headless=True, args=CHROMIUM_FLAGS)
        try:
            yield browser
        finally:
            browser.close()
