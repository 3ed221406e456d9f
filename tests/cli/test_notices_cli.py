"""`bandgate notices`: register a target (secret printed once, last line), send, log, refuse unknown clients."""

from __future__ import annotations

import pytest

from service.cli import main
from service.config import get_settings


def test_notices_target_send_log_and_refusal(sqlite_url: str, monkeypatch: pytest.MonkeyPatch, capsys) -> None:  # type: ignore[no-untyped-def]
    from service.services.notices import delivery_log
    from service.services.security_clients import create_token
    from service.store.engine import make_engine
    from service.store.migrations import upgrade

    upgrade(sqlite_url)
    engine = make_engine(sqlite_url)
    create_token(engine, client="lims", scopes="read")
    monkeypatch.setenv("BANDGATE_DATABASE_URL", sqlite_url)
    get_settings.cache_clear()
    try:
        assert main(["notices", "target", "--client", "lims", "--url", "http://127.0.0.1:9/in"]) == 0
        secret = capsys.readouterr().out.strip().splitlines()[-1]
        assert len(secret) >= 40 and " " not in secret
        assert main(["notices", "send"]) == 0
        assert "queued 0" in capsys.readouterr().out
        assert main(["notices", "log"]) == 0 and delivery_log(engine) == []
        assert main(["notices", "target", "--client", "nobody", "--url", "http://127.0.0.1:9/in"]) == 2
        assert "no API client 'nobody'" in capsys.readouterr().err
        assert main(["notices", "target", "--client", "lims", "--url", "ftp://x"]) == 2
        assert main(["notices", "disable", "--client", "lims"]) == 0
        assert "disabled" in capsys.readouterr().out
    finally:
        get_settings.cache_clear()
        engine.dispose()
