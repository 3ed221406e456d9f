"""`bandgate user ...` and `bandgate token ...`: people and API clients from the command line.

For the first administrator and for scripting. Changes made here are audited as the system
actor (the command line has no signed-in person); every change that is not a creation needs
``--reason``.
"""

from __future__ import annotations

import argparse
import getpass
import sys

from service.errors import InvalidInput


def register(subparsers: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    user = subparsers.add_parser("user", help="create, disable, reset or list people",
                                 description="Manage people: user ids are never deleted or reused.")
    u = user.add_subparsers(dest="user_command", metavar="ACTION")

    p = u.add_parser("create", help="create a person",
                     description="Create a person. The password is read from --password-stdin, asked for on a "
                     "terminal, or generated and printed; unless --own-password is given, the person must "
                     "choose a new one at first sign-in.")
    p.add_argument("--username", required=True, help="user id: lowercase letters, digits, . _ -")
    p.add_argument("--name", required=True, help="printed name, as it appears on signed records")
    p.add_argument("--role", required=True,
                   help="comma-separated roles: technician, supervisor, quality, administrator")
    p.add_argument("--password-stdin", action="store_true", help="read the password from the first line of stdin")
    p.add_argument("--own-password", action="store_true",
                   help="the person is typing their own password: no change needed at first sign-in")
    p.set_defaults(handler=_create)

    for name, helptext in (("disable", "disable an account (ends its sessions)"), ("enable", "enable an account")):
        p = u.add_parser(name, help=helptext, description=helptext[0].upper() + helptext[1:] + ".")
        p.add_argument("username")
        p.add_argument("--reason", required=True, help="why (recorded in the audit trail)")
        p.set_defaults(handler=_set_active, active=(name == "enable"))

    p = u.add_parser("reset-password", help="set a temporary password (printed once)",
                     description="Reset a password: a temporary one is generated and printed once (or read with "
                     "--password-stdin); the lock is cleared, sessions end, and the person must choose a new "
                     "password before signing anything.")
    p.add_argument("username")
    p.add_argument("--reason", required=True, help="why (recorded in the audit trail)")
    p.add_argument("--password-stdin", action="store_true", help="read the temporary password from stdin")
    p.set_defaults(handler=_reset)

    p = u.add_parser("roles", help="change a person's roles", description="Replace a person's roles.")
    p.add_argument("username")
    p.add_argument("--role", required=True, help="comma-separated roles")
    p.add_argument("--reason", required=True, help="why (recorded in the audit trail)")
    p.set_defaults(handler=_roles)

    p = u.add_parser("unlock", help="unlock an account locked by wrong passwords",
                     description="Clear the lock and the count of wrong passwords.")
    p.add_argument("username")
    p.add_argument("--reason", required=True, help="why (recorded in the audit trail)")
    p.set_defaults(handler=_unlock)

    p = u.add_parser("list", help="list people", description="List every person, disabled ones too.")
    p.set_defaults(handler=_list)
    user.set_defaults(handler=lambda _a: (user.print_help(), 2)[1])

    token = subparsers.add_parser("token", help="API client tokens",
                                  description="Bearer tokens for lab systems. A token is printed once; only its "
                                  "hash is kept. No scope can sign.")
    t = token.add_subparsers(dest="token_command", metavar="ACTION")
    p = t.add_parser("create", help="make a token for a client (printed once, on the last line)",
                     description="Make a token for a client, registering the client if it is new. The token is "
                     "printed alone on the last line, once.")
    p.add_argument("--client", required=True, help="client name")
    p.add_argument("--scope", required=True, help="comma-separated scopes: read, submit, manage")
    p.set_defaults(handler=_token_create)
    p = t.add_parser("revoke", help="revoke every token of a client", description="Revoke every token of a client.")
    p.add_argument("--client", required=True)
    p.add_argument("--reason", required=True, help="why (recorded in the audit trail)")
    p.set_defaults(handler=_token_revoke)
    p = t.add_parser("list", help="list clients and tokens (never the tokens themselves)",
                     description="List API clients, token prefixes, scopes and use.")
    p.set_defaults(handler=_token_list)
    token.set_defaults(handler=lambda _a: (token.print_help(), 2)[1])


def _engine():  # type: ignore[no-untyped-def]
    from service.config import get_settings
    from service.store.engine import make_engine
    from service.store.migrations import ensure_at_head

    settings = get_settings()
    engine = make_engine(settings.database_url)
    ensure_at_head(engine, settings.database_url)
    return engine


def _read_password(args: argparse.Namespace) -> str | None:
    if args.password_stdin:
        line = sys.stdin.readline()
        password = line[:-1] if line.endswith("\n") else line
        if not password:
            raise InvalidInput("--password-stdin was given but stdin had no password on its first line")
        return password
    if sys.stdin.isatty():
        first = getpass.getpass("Password (12 to 128 characters): ")
        if first != getpass.getpass("Same password again: "):
            raise InvalidInput("the two passwords differ; run the command again")
        return first
    return None


def _create(args: argparse.Namespace) -> int:
    from service.services.security_accounts import create_user, generate_temporary_password

    password = _read_password(args)
    generated = password is None
    if generated:
        password = generate_temporary_password()
    person = create_user(_engine(), username=args.username, printed_name=args.name, roles=args.role,
                         password=password, must_change_password=not (args.own_password and not generated))
    print(f"created user {person.id} {person.username} ({person.printed_name}) roles {','.join(person.roles)}")
    if generated:
        print("temporary password (shown once; the person must change it at first sign-in):")
        print(password)
    return 0


def _set_active(args: argparse.Namespace) -> int:
    from service.services.security_accounts import set_active

    person = set_active(_engine(), username=args.username, active=args.active, reason=args.reason)
    print(f"{person.username}: {'active' if person.active else 'disabled (sessions ended)'}")
    return 0


def _reset(args: argparse.Namespace) -> int:
    from service.services.security_accounts import reset_password

    given = _read_password(args) if args.password_stdin else None
    person, temporary = reset_password(_engine(), username=args.username, reason=args.reason, new_password=given)
    print(f"{person.username}: password reset, lock cleared, sessions ended; a new password is required "
          "before signing")
    if given is None:
        print("temporary password (shown once):")
        print(temporary)
    return 0


def _roles(args: argparse.Namespace) -> int:
    from service.services.security_accounts import set_roles

    person = set_roles(_engine(), username=args.username, roles=args.role, reason=args.reason)
    print(f"{person.username}: roles {','.join(person.roles)}")
    return 0


def _unlock(args: argparse.Namespace) -> int:
    from service.services.security_accounts import unlock

    person = unlock(_engine(), username=args.username, reason=args.reason)
    print(f"{person.username}: unlocked")
    return 0


def _list(_args: argparse.Namespace) -> int:
    from service.services.security_accounts import list_people

    people = list_people(_engine())
    print(f"{'id':>4}  {'user id':<20} {'printed name':<28} {'roles':<36} state")
    for p in people:
        state = ("disabled" if not p.active else "locked" if p.locked else
                 "must change password" if p.must_change_password else "active")
        print(f"{p.id:>4}  {p.username:<20} {p.printed_name:<28} {','.join(p.roles):<36} {state}")
    return 0


def _token_create(args: argparse.Namespace) -> int:
    from service.services.security_clients import create_token

    token = create_token(_engine(), client=args.client, scopes=args.scope)
    print(f"token for client {args.client} (scopes {args.scope}); it is shown once and only its hash is kept:")
    print(token)
    return 0


def _token_revoke(args: argparse.Namespace) -> int:
    from service.services.security_clients import revoke_tokens

    n = revoke_tokens(_engine(), client=args.client, reason=args.reason)
    print(f"revoked {n} token(s) of {args.client}")
    return 0


def _token_list(_args: argparse.Namespace) -> int:
    from service.services.security_clients import list_clients

    for c in list_clients(_engine()):
        state = "revoked" if c["revoked_at"] else ("active" if c["token_prefix"] else "no token")
        print(f"{c['name']:<24} {c['token_prefix'] or '-':<10} {c['scopes'] or '-':<22} {state}")
    return 0
