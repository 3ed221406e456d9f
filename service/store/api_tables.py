"""Tables owned by the API layer (migration 0004): idempotency keys and outbound notices.

Plain SQLAlchemy Core tables on their own metadata: the records layer's SQLModel tables are
untouched, and the migration is the source of truth for the schema.
"""

from __future__ import annotations

import sqlalchemy as sa

metadata = sa.MetaData()
TZ = sa.DateTime(timezone=True)

idempotency_keys = sa.Table(
    "api_idempotency_keys", metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    sa.Column("client_id", sa.String(64), nullable=False),
    sa.Column("idem_key", sa.String(255), nullable=False),
    sa.Column("method", sa.String(8), nullable=False),
    sa.Column("path", sa.String(500), nullable=False),
    sa.Column("request_hash", sa.String(64), nullable=False),
    sa.Column("state", sa.String(16), nullable=False),
    sa.Column("status_code", sa.Integer, nullable=True),
    sa.Column("response_json", sa.Text, nullable=True),
    sa.Column("audit_seq", sa.Integer, nullable=True),
    sa.Column("created_at", TZ, nullable=False),
    sa.Column("completed_at", TZ, nullable=True),
)

notice_targets = sa.Table(
    "api_notice_targets", metadata,
    sa.Column("client_id", sa.String(64), primary_key=True),
    sa.Column("url", sa.Text, nullable=False),
    sa.Column("secret", sa.Text, nullable=False),
    sa.Column("active", sa.Boolean, nullable=False),
    sa.Column("created_at", TZ, nullable=False),
)

notices = sa.Table(
    "api_notices", metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    sa.Column("client_id", sa.String(64), nullable=False),
    sa.Column("lot_code", sa.String(64), nullable=False),
    sa.Column("event", sa.String(64), nullable=False),
    sa.Column("body", sa.Text, nullable=False),
    sa.Column("created_at", TZ, nullable=False),
    sa.Column("attempts", sa.Integer, nullable=False),
    sa.Column("next_attempt_at", TZ, nullable=True),
    sa.Column("delivered_at", TZ, nullable=True),
    sa.Column("gave_up_at", TZ, nullable=True),
)

notice_attempts = sa.Table(
    "api_notice_attempts", metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    sa.Column("notice_id", sa.Integer, sa.ForeignKey("api_notices.id"), nullable=False),
    sa.Column("attempted_at", TZ, nullable=False),
    sa.Column("status_code", sa.Integer, nullable=True),
    sa.Column("error", sa.Text, nullable=True),
    sa.Column("duration_ms", sa.Float, nullable=False),
)
