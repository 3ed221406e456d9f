"""instrument checks: the time the polystyrene film was measured, beside the recording time

Revision ID: 0005
Revises: 0004
Create Date: 2026-12-02

``instrument_checks.measured_at`` (nullable, UTC) is the measurement time taken from the uploaded
file; ``checked_at`` stays the server's recording time (the audit time). Existing rows keep NULL,
which means "measured at recording time". ``instrument_checks`` is append-only: adding a nullable
column changes no row, so its triggers stay. On SQLite, dropping the column in batch mode rebuilds
the table, which drops its triggers; the downgrade creates them again.
"""
from alembic import op
import sqlalchemy as sa

revision = "0005"
down_revision = "0004"
branch_labels = None
depends_on = None

TABLE = "instrument_checks"


def upgrade() -> None:
    with op.batch_alter_table(TABLE, recreate="never") as batch:  # a plain ADD COLUMN on both back-ends
        batch.add_column(sa.Column("measured_at", sa.DateTime(timezone=True), nullable=True))


def downgrade() -> None:
    sqlite = op.get_bind().dialect.name == "sqlite"
    if sqlite:
        for verb in ("update", "delete"):
            op.execute(f"DROP TRIGGER IF EXISTS {TABLE}_no_{verb}")
    with op.batch_alter_table(TABLE) as batch:
        batch.drop_column("measured_at")
    if sqlite:
        for verb in ("UPDATE", "DELETE"):
            op.execute(
                f"CREATE TRIGGER {TABLE}_no_{verb.lower()} BEFORE {verb} ON {TABLE} BEGIN "
                f"SELECT RAISE(ABORT, 'append-only table {TABLE}: {verb} refused "
                "(records are never changed or removed)'); END"
            )
