"""api: idempotency keys of API writes, outbound notice targets, notices and their delivery log

Revision ID: 0004
Revises: 0003
Create Date: 2026-12-02
"""
from alembic import op
import sqlalchemy as sa

revision = "0004"
down_revision = "0003"
branch_labels = None
depends_on = None

TZ = sa.DateTime(timezone=True)


def upgrade() -> None:
    op.create_table(
        "api_idempotency_keys",
        sa.Column("id", sa.Integer(), primary_key=True, autoincrement=True),
        sa.Column("client_id", sa.String(64), nullable=False),
        sa.Column("idem_key", sa.String(255), nullable=False),
        sa.Column("method", sa.String(8), nullable=False),
        sa.Column("path", sa.String(500), nullable=False),
        sa.Column("request_hash", sa.String(64), nullable=False),
        sa.Column("state", sa.String(16), nullable=False),
        sa.Column("status_code", sa.Integer(), nullable=True),
        sa.Column("response_json", sa.Text(), nullable=True),
        sa.Column("audit_seq", sa.Integer(), nullable=True),
        sa.Column("created_at", TZ, nullable=False),
        sa.Column("completed_at", TZ, nullable=True),
        sa.UniqueConstraint("client_id", "idem_key", name="uq_api_idempotency_client_key"),
        sa.CheckConstraint("state IN ('in_flight', 'done')", name="ck_api_idempotency_state"),
    )
    op.create_table(
        "api_notice_targets",
        sa.Column("client_id", sa.String(64), primary_key=True),
        sa.Column("url", sa.Text(), nullable=False),
        sa.Column("secret", sa.Text(), nullable=False),
        sa.Column("active", sa.Boolean(), nullable=False),
        sa.Column("created_at", TZ, nullable=False),
    )
    op.create_table(
        "api_notices",
        sa.Column("id", sa.Integer(), primary_key=True, autoincrement=True),
        sa.Column("client_id", sa.String(64), nullable=False),
        sa.Column("lot_code", sa.String(64), nullable=False),
        sa.Column("event", sa.String(64), nullable=False),
        sa.Column("body", sa.Text(), nullable=False),
        sa.Column("created_at", TZ, nullable=False),
        sa.Column("attempts", sa.Integer(), nullable=False),
        sa.Column("next_attempt_at", TZ, nullable=True),
        sa.Column("delivered_at", TZ, nullable=True),
        sa.Column("gave_up_at", TZ, nullable=True),
        sa.UniqueConstraint("client_id", "lot_code", "event", name="uq_api_notices_once"),
    )
    op.create_index("ix_api_notices_due", "api_notices", ["delivered_at", "gave_up_at", "next_attempt_at"])
    op.create_table(
        "api_notice_attempts",
        sa.Column("id", sa.Integer(), primary_key=True, autoincrement=True),
        sa.Column("notice_id", sa.Integer(), sa.ForeignKey("api_notices.id"), nullable=False),
        sa.Column("attempted_at", TZ, nullable=False),
        sa.Column("status_code", sa.Integer(), nullable=True),
        sa.Column("error", sa.Text(), nullable=True),
        sa.Column("duration_ms", sa.Float(), nullable=False),
    )
    op.create_index("ix_api_notice_attempts_notice", "api_notice_attempts", ["notice_id"])


def downgrade() -> None:
    op.drop_index("ix_api_notice_attempts_notice", table_name="api_notice_attempts")
    op.drop_table("api_notice_attempts")
    op.drop_index("ix_api_notices_due", table_name="api_notices")
    op.drop_table("api_notices")
    op.drop_table("api_notice_targets")
    op.drop_table("api_idempotency_keys")
