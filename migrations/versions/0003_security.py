"""security: credentials on users, server-side sessions, sign-in attempts, API clients and tokens;
users are never deleted and a username is never reassigned (database triggers)

Revision ID: 0003
Revises: 0002
Create Date: 2026-12-02
"""
from alembic import op
import sqlalchemy as sa

revision = "0003"
down_revision = "0002"
branch_labels = None
depends_on = None


def _ts(name: str, nullable: bool = False) -> sa.Column:
    return sa.Column(name, sa.DateTime(timezone=True), nullable=nullable)


USER_COLUMNS = ("password_hash", "password_changed_at", "must_change_password", "failed_attempts",
                "last_failed_at", "locked_until", "disabled_at")


def upgrade() -> None:
    op.add_column("users", sa.Column("password_hash", sa.Text(), nullable=True))
    op.add_column("users", _ts("password_changed_at", nullable=True))
    op.add_column("users", sa.Column("must_change_password", sa.Boolean(), nullable=False,
                                     server_default=sa.false()))
    op.add_column("users", sa.Column("failed_attempts", sa.Integer(), nullable=False, server_default="0"))
    op.add_column("users", _ts("last_failed_at", nullable=True))
    op.add_column("users", _ts("locked_until", nullable=True))
    op.add_column("users", _ts("disabled_at", nullable=True))

    op.create_table(
        "user_sessions",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("token_hash", sa.String(64), nullable=False, unique=True),
        sa.Column("user_id", sa.Integer(), sa.ForeignKey("users.id"), nullable=False, index=True),
        _ts("created_at"), _ts("last_seen_at"), _ts("ended_at", nullable=True),
        sa.Column("end_reason", sa.String(32), nullable=True),
        sa.Column("address", sa.String(64), nullable=False, server_default=""),
        sa.Column("user_agent", sa.String(200), nullable=False, server_default=""),
        sa.Column("signed_once", sa.Boolean(), nullable=False, server_default=sa.false()),
    )
    op.create_table(
        "sign_in_attempts",
        sa.Column("id", sa.Integer(), primary_key=True),
        _ts("occurred_at"),
        sa.Column("kind", sa.String(16), nullable=False),
        sa.Column("username_entered", sa.String(64), nullable=False),
        sa.Column("user_id", sa.Integer(), sa.ForeignKey("users.id"), nullable=True, index=True),
        sa.Column("address", sa.String(64), nullable=False),
        sa.Column("outcome", sa.String(24), nullable=False),
    )
    op.create_index("ix_sign_in_attempts_address_time", "sign_in_attempts", ["address", "occurred_at"])
    op.create_table(
        "api_clients",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("name", sa.String(64), nullable=False, unique=True),
        sa.Column("active", sa.Boolean(), nullable=False, server_default=sa.true()),
        _ts("created_at"),
        sa.Column("created_by", sa.Integer(), sa.ForeignKey("users.id"), nullable=True),
        sqlite_autoincrement=True,
    )
    op.create_table(
        "api_tokens",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("client_id", sa.Integer(), sa.ForeignKey("api_clients.id"), nullable=False, index=True),
        sa.Column("token_prefix", sa.String(16), nullable=False),
        sa.Column("token_hash", sa.String(64), nullable=False, unique=True),
        sa.Column("scopes", sa.Text(), nullable=False),
        _ts("created_at"),
        sa.Column("created_by", sa.Integer(), sa.ForeignKey("users.id"), nullable=True),
        _ts("revoked_at", nullable=True),
        _ts("last_used_at", nullable=True),
    )
    _create_identity_triggers()


def _create_identity_triggers() -> None:
    """A user row is never deleted, and its id and username never change (21 CFR 11.300(a))."""
    if op.get_bind().dialect.name == "postgresql":
        op.execute(
            "CREATE FUNCTION bandgate_user_identity_fixed() RETURNS trigger LANGUAGE plpgsql AS $$ BEGIN "
            "IF TG_OP = 'DELETE' THEN RAISE EXCEPTION 'users are never deleted: disable the account instead'; END IF; "
            "IF NEW.id <> OLD.id OR NEW.username <> OLD.username THEN "
            "RAISE EXCEPTION 'a user id and username are never changed or reassigned'; END IF; "
            "RETURN NEW; END $$"
        )
        op.execute("CREATE TRIGGER users_identity_fixed BEFORE UPDATE OR DELETE ON users "
                   "FOR EACH ROW EXECUTE FUNCTION bandgate_user_identity_fixed()")
        op.execute("CREATE TRIGGER users_no_truncate BEFORE TRUNCATE ON users "
                   "FOR EACH STATEMENT EXECUTE FUNCTION bandgate_user_identity_fixed()")
    else:
        op.execute("CREATE TRIGGER users_no_delete BEFORE DELETE ON users BEGIN "
                   "SELECT RAISE(ABORT, 'users are never deleted: disable the account instead'); END")
        op.execute("CREATE TRIGGER users_identity_fixed BEFORE UPDATE OF id, username ON users "
                   "WHEN NEW.id <> OLD.id OR NEW.username <> OLD.username BEGIN "
                   "SELECT RAISE(ABORT, 'a user id and username are never changed or reassigned'); END")


def _drop_identity_triggers() -> None:
    if op.get_bind().dialect.name == "postgresql":
        op.execute("DROP TRIGGER IF EXISTS users_identity_fixed ON users")
        op.execute("DROP TRIGGER IF EXISTS users_no_truncate ON users")
        op.execute("DROP FUNCTION IF EXISTS bandgate_user_identity_fixed()")
    else:
        op.execute("DROP TRIGGER IF EXISTS users_no_delete")
        op.execute("DROP TRIGGER IF EXISTS users_identity_fixed")


def downgrade() -> None:
    _drop_identity_triggers()
    op.drop_table("api_tokens")
    op.drop_table("api_clients")
    op.drop_index("ix_sign_in_attempts_address_time", table_name="sign_in_attempts")
    op.drop_table("sign_in_attempts")
    op.drop_table("user_sessions")
    with op.batch_alter_table("users") as batch:
        for name in reversed(USER_COLUMNS):
            batch.drop_column(name)
