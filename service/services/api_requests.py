"""API request bookkeeping the web layer needs from the store: idempotency keys.

A thin seam so that `service.web` reaches the database only through `service.services`.
"""

from __future__ import annotations

from service.store.idempotency import (
    ClaimResult,
    Claimed,
    InFlight,
    Mismatch,
    Replay,
    claim,
    complete,
    complete_alone,
    release,
)

__all__ = ["ClaimResult", "Claimed", "InFlight", "Mismatch", "Replay", "claim", "complete", "complete_alone",
           "release"]
