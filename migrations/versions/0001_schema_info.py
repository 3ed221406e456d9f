"""schema_info: installation facts, so that migrations are exercised from the first revision

Revision ID: 0001
Revises:
Create Date: 2026-12-02
"""
from alembic import op
import sqlalchemy as sa

revision = "0001"
down_revision = None
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "schema_info",
        sa.Column("key", sa.String(64), primary_key=True),
        sa.Column("value", sa.Text(), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
    )
    op.execute(
        sa.text(
            "INSERT INTO schema_info (key, value, updated_at) "
            "VALUES ('installation', 'bandgate', CURRENT_TIMESTAMP)"
        )
    )


def downgrade() -> None:
    op.drop_table("schema_info")
