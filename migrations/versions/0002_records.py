"""records: users, materials, suppliers, specifications, references, instruments, lots, measurements,
evaluations, signatures, decisions and the hash-chained audit trail, with append-only triggers

Revision ID: 0002
Revises: 0001
Create Date: 2026-12-02
"""
from alembic import op
import sqlalchemy as sa

revision = "0002"
down_revision = "0001"
branch_labels = None
depends_on = None

# Tables whose rows may never be changed or removed once written (see docs/records.md).
APPEND_ONLY = (
    "stored_files", "measurements", "evaluations", "measurement_invalidations", "instrument_checks",
    "signatures", "lot_decisions", "audit_events",
)


def _ts(name: str, nullable: bool = False) -> sa.Column:
    return sa.Column(name, sa.DateTime(timezone=True), nullable=nullable)


def _id() -> sa.Column:
    return sa.Column("id", sa.Integer(), primary_key=True)


def _by(name: str = "created_by", nullable: bool = False) -> sa.Column:
    return sa.Column(name, sa.Integer(), sa.ForeignKey("users.id"), nullable=nullable)


def upgrade() -> None:
    op.create_table(
        "users", _id(),
        sa.Column("username", sa.String(64), nullable=False, unique=True),
        sa.Column("printed_name", sa.String(200), nullable=False),
        sa.Column("roles", sa.Text(), nullable=False),
        sa.Column("active", sa.Boolean(), nullable=False),
        _ts("created_at"),
        sqlite_autoincrement=True,
    )
    op.create_table(
        "stored_files", _id(),
        sa.Column("sha256", sa.String(64), nullable=False, index=True),
        sa.Column("size", sa.Integer(), nullable=False),
        sa.Column("content", sa.LargeBinary(), nullable=False),
        _ts("created_at"),
    )
    op.create_table(
        "materials", _id(),
        sa.Column("code", sa.String(64), nullable=False, unique=True),
        sa.Column("name", sa.String(200), nullable=False),
        sa.Column("description", sa.Text(), nullable=False),
        _ts("created_at"), _by(),
    )
    op.create_table(
        "suppliers", _id(),
        sa.Column("name", sa.String(200), nullable=False, unique=True),
        _ts("created_at"), _by(),
    )
    op.create_table(
        "supplier_approvals", _id(),
        sa.Column("material_id", sa.Integer(), sa.ForeignKey("materials.id"), nullable=False, index=True),
        sa.Column("supplier_id", sa.Integer(), sa.ForeignKey("suppliers.id"), nullable=False, index=True),
        sa.Column("reduced_plan", sa.Boolean(), nullable=False),
        sa.Column("active", sa.Boolean(), nullable=False),
        _ts("created_at"), _by(),
        sa.UniqueConstraint("material_id", "supplier_id", name="uq_supplier_approval"),
    )
    op.create_table(
        "specification_versions", _id(),
        sa.Column("material_id", sa.Integer(), sa.ForeignKey("materials.id"), nullable=False, index=True),
        sa.Column("version", sa.Integer(), nullable=False),
        sa.Column("status", sa.String(16), nullable=False),
        sa.Column("document", sa.Text(), nullable=False),
        _ts("created_at"), _by(), _ts("approved_at", True), _by("approved_by", True),
        sa.UniqueConstraint("material_id", "version", name="uq_spec_version"),
    )
    op.create_table(
        "instruments", _id(),
        sa.Column("code", sa.String(64), nullable=False, unique=True),
        sa.Column("kind", sa.String(200), nullable=False),
        sa.Column("location", sa.String(200), nullable=False),
        sa.Column("active", sa.Boolean(), nullable=False),
        _ts("created_at"), _by(),
    )
    op.create_table(
        "instrument_checks", _id(),
        sa.Column("instrument_id", sa.Integer(), sa.ForeignKey("instruments.id"), nullable=False, index=True),
        sa.Column("file_id", sa.Integer(), sa.ForeignKey("stored_files.id"), nullable=False),
        sa.Column("file_name", sa.String(255), nullable=False),
        sa.Column("passed", sa.Boolean(), nullable=False),
        sa.Column("result", sa.Text(), nullable=False),
        _ts("checked_at"), _by("checked_by"),
    )
    op.create_table(
        "reference_spectra", _id(),
        sa.Column("material_id", sa.Integer(), sa.ForeignKey("materials.id"), nullable=False, index=True),
        sa.Column("preparation", sa.String(64), nullable=False),
        sa.Column("file_id", sa.Integer(), sa.ForeignKey("stored_files.id"), nullable=False),
        sa.Column("file_name", sa.String(255), nullable=False),
        sa.Column("sha256", sa.String(64), nullable=False),
        sa.Column("instrument_id", sa.Integer(), sa.ForeignKey("instruments.id"), nullable=True),
        sa.Column("conditions", sa.Text(), nullable=False),
        sa.Column("measured_on", sa.Date(), nullable=True),
        sa.Column("status", sa.String(16), nullable=False),
        _ts("created_at"), _by(), _ts("approved_at", True), _by("approved_by", True),
    )
    op.create_table(
        "lots", _id(),
        sa.Column("code", sa.String(32), nullable=False, unique=True),
        sa.Column("material_id", sa.Integer(), sa.ForeignKey("materials.id"), nullable=False, index=True),
        sa.Column("supplier_id", sa.Integer(), sa.ForeignKey("suppliers.id"), nullable=False, index=True),
        sa.Column("supplier_lot", sa.String(100), nullable=False),
        sa.Column("containers_received", sa.Integer(), nullable=False),
        sa.Column("received_on", sa.Date(), nullable=False),
        sa.Column("retest_on", sa.Date(), nullable=True),
        sa.Column("state", sa.String(32), nullable=False, index=True),
        sa.Column("plan", sa.Text(), nullable=False),
        _ts("created_at"), _by(), _ts("state_changed_at"),
    )
    op.create_table(
        "lot_containers", _id(),
        sa.Column("lot_id", sa.Integer(), sa.ForeignKey("lots.id"), nullable=False, index=True),
        sa.Column("number", sa.Integer(), nullable=False),
        sa.Column("selected", sa.Boolean(), nullable=False),
        sa.Column("sampled", sa.Boolean(), nullable=False),
        _ts("sampled_at", True),
        sa.UniqueConstraint("lot_id", "number", name="uq_lot_container"),
    )
    op.create_table(
        "measurements", _id(),
        sa.Column("lot_id", sa.Integer(), sa.ForeignKey("lots.id"), nullable=False, index=True),
        sa.Column("container_id", sa.Integer(), sa.ForeignKey("lot_containers.id"), nullable=False, index=True),
        sa.Column("instrument_id", sa.Integer(), sa.ForeignKey("instruments.id"), nullable=False),
        sa.Column("operator_id", sa.Integer(), sa.ForeignKey("users.id"), nullable=False, index=True),
        sa.Column("file_id", sa.Integer(), sa.ForeignKey("stored_files.id"), nullable=False),
        sa.Column("sha256", sa.String(64), nullable=False),
        sa.Column("size", sa.Integer(), nullable=False),
        sa.Column("file_name", sa.String(255), nullable=False),
        _ts("received_at"),
        sa.Column("status", sa.String(16), nullable=False),
        sa.Column("reason", sa.Text(), nullable=False),
        sa.Column("retest_of_id", sa.Integer(), sa.ForeignKey("measurements.id"), nullable=True),
    )
    op.create_table(
        "evaluations", _id(),
        sa.Column("measurement_id", sa.Integer(), sa.ForeignKey("measurements.id"), nullable=False, unique=True),
        sa.Column("verdict", sa.String(16), nullable=False),
        sa.Column("document", sa.Text(), nullable=False),
        sa.Column("spec_version_id", sa.Integer(), sa.ForeignKey("specification_versions.id"), nullable=False),
        sa.Column("reference_id", sa.Integer(), sa.ForeignKey("reference_spectra.id"), nullable=False),
        sa.Column("software_version", sa.String(64), nullable=False),
        _ts("created_at"),
    )
    op.create_table(
        "signatures", _id(),
        sa.Column("record_type", sa.String(32), nullable=False),
        sa.Column("record_id", sa.Integer(), nullable=False),
        sa.Column("meaning", sa.String(32), nullable=False),
        sa.Column("reason", sa.Text(), nullable=False),
        sa.Column("user_id", sa.Integer(), sa.ForeignKey("users.id"), nullable=False),
        sa.Column("username", sa.String(64), nullable=False),
        sa.Column("printed_name", sa.String(200), nullable=False),
        _ts("signed_at"),
        sa.Column("digest", sa.String(64), nullable=False),
        sa.Index("ix_signature_record", "record_type", "record_id"),
    )
    op.create_table(
        "measurement_invalidations", _id(),
        sa.Column("measurement_id", sa.Integer(), sa.ForeignKey("measurements.id"), nullable=False, unique=True),
        sa.Column("cause", sa.Text(), nullable=False),
        sa.Column("signature_id", sa.Integer(), sa.ForeignKey("signatures.id"), nullable=False),
        _ts("created_at"), _by(),
    )
    op.create_table(
        "lot_decisions", _id(),
        sa.Column("lot_id", sa.Integer(), sa.ForeignKey("lots.id"), nullable=False, unique=True),
        sa.Column("outcome", sa.String(16), nullable=False),
        sa.Column("stage", sa.String(16), nullable=False),
        sa.Column("signature_id", sa.Integer(), sa.ForeignKey("signatures.id"), nullable=False),
        _ts("decided_at"), _by("decided_by"),
    )
    op.create_table(
        "audit_events", _id(),
        sa.Column("seq", sa.Integer(), nullable=False, unique=True),
        _ts("occurred_at"),
        sa.Column("user_id", sa.Integer(), nullable=True),
        sa.Column("username", sa.String(64), nullable=False),
        sa.Column("action", sa.String(64), nullable=False),
        sa.Column("record_type", sa.String(32), nullable=False),
        sa.Column("record_id", sa.String(64), nullable=False),
        sa.Column("old_values", sa.Text(), nullable=False),
        sa.Column("new_values", sa.Text(), nullable=False),
        sa.Column("reason", sa.Text(), nullable=False),
        sa.Column("prev_hash", sa.String(64), nullable=False, unique=True),
        sa.Column("hash", sa.String(64), nullable=False, unique=True),
        sa.Index("ix_audit_record", "record_type", "record_id"),
        sqlite_autoincrement=True,
    )
    _create_append_only_triggers()


def _create_append_only_triggers() -> None:
    if op.get_bind().dialect.name == "postgresql":
        op.execute(
            "CREATE FUNCTION bandgate_refuse_change() RETURNS trigger LANGUAGE plpgsql AS $$ "
            "BEGIN RAISE EXCEPTION 'append-only table %: % refused (records are never changed or removed)', "
            "TG_TABLE_NAME, TG_OP USING ERRCODE = 'insufficient_privilege'; END $$"
        )
        for table in APPEND_ONLY:
            op.execute(
                f"CREATE TRIGGER {table}_append_only BEFORE UPDATE OR DELETE ON {table} "
                "FOR EACH ROW EXECUTE FUNCTION bandgate_refuse_change()"
            )
            op.execute(
                f"CREATE TRIGGER {table}_no_truncate BEFORE TRUNCATE ON {table} "
                "FOR EACH STATEMENT EXECUTE FUNCTION bandgate_refuse_change()"
            )
    else:
        for table in APPEND_ONLY:
            for verb in ("UPDATE", "DELETE"):
                op.execute(
                    f"CREATE TRIGGER {table}_no_{verb.lower()} BEFORE {verb} ON {table} BEGIN "
                    f"SELECT RAISE(ABORT, 'append-only table {table}: {verb} refused "
                    "(records are never changed or removed)'); END"
                )


def _drop_append_only_triggers() -> None:
    if op.get_bind().dialect.name == "postgresql":
        for table in APPEND_ONLY:
            op.execute(f"DROP TRIGGER IF EXISTS {table}_append_only ON {table}")
            op.execute(f"DROP TRIGGER IF EXISTS {table}_no_truncate ON {table}")
        op.execute("DROP FUNCTION IF EXISTS bandgate_refuse_change()")
    else:
        for table in APPEND_ONLY:
            op.execute(f"DROP TRIGGER IF EXISTS {table}_no_update")
            op.execute(f"DROP TRIGGER IF EXISTS {table}_no_delete")


def downgrade() -> None:
    _drop_append_only_triggers()
    for table in (
        "audit_events", "lot_decisions", "measurement_invalidations", "signatures", "evaluations",
        "measurements", "lot_containers", "lots", "reference_spectra", "instrument_checks", "instruments",
        "specification_versions", "supplier_approvals", "suppliers", "materials", "stored_files", "users",
    ):
        op.drop_table(table)
