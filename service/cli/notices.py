"""notices: register where a client's decision notices go, send due notices now, read the delivery log."""

from __future__ import annotations

import argparse

from service.config import get_settings


def register(subparsers: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = subparsers.add_parser(
        "notices", help="outbound decision notices to API clients",
        description="When a lot reaches a decision (conforms or failed, awaiting a person; released; rejected), "
        "Bandgate POSTs a JSON notice to the client's registered URL, signed with HMAC-SHA256 over the body "
        "(header Bandgate-Signature: sha256=<hex>), retried on a growing schedule, every attempt logged.",
    )
    sub = p.add_subparsers(dest="notices_command", metavar="ACTION")
    t = sub.add_parser("target", help="register (or replace) a client's notice URL; prints the signing secret once",
                       description="Register or replace the URL a client's notices go to. The new signing secret "
                       "is printed alone on the last line, once; give it to the receiving system.")
    t.add_argument("--client", required=True, help="API client name (as in `bandgate token create`)")
    t.add_argument("--url", required=True, help="absolute http(s) URL that receives the notices")
    t.set_defaults(handler=_target)
    d = sub.add_parser("disable", help="stop sending a client notices", description="Stop sending notices to a client.")
    d.add_argument("--client", required=True)
    d.set_defaults(handler=_disable)
    s = sub.add_parser("send", help="queue and deliver due notices now",
                       description="Queue notices for lots that reached a decision and deliver those due (the "
                       "server does this every few seconds on its own).")
    s.set_defaults(handler=_send)
    g = sub.add_parser("log", help="show the delivery log, newest first", description="Show the delivery log.")
    g.add_argument("--client", help="only this client")
    g.add_argument("--limit", type=int, default=50)
    g.set_defaults(handler=_log)
    p.set_defaults(handler=lambda _a: p.print_help() or 2)


def _engine():  # type: ignore[no-untyped-def]
    from service.store.engine import make_engine

    return make_engine(get_settings().database_url)


def _target(args: argparse.Namespace) -> int:
    from service.services.notices import register_target

    secret = register_target(_engine(), client_name=args.client, url=args.url)
    print(f"notices for client {args.client} go to {args.url}; signing secret (shown once):")
    print(secret)
    return 0


def _disable(args: argparse.Namespace) -> int:
    from service.services.notices import disable_target

    done = disable_target(_engine(), client_name=args.client)
    print(f"notices for client {args.client}: {'disabled' if done else 'none were registered'}")
    return 0


def _send(_args: argparse.Namespace) -> int:
    from service.services.notices import deliver_due, queue_decisions

    engine = _engine()
    queued = queue_decisions(engine)
    outcomes = deliver_due(engine)
    ok = sum(o.delivered for o in outcomes)
    print(f"queued {queued}; attempted {len(outcomes)}, delivered {ok}, will retry or gave up {len(outcomes) - ok}")
    return 0


def _log(args: argparse.Namespace) -> int:
    from service.services.notices import client_key, delivery_log

    engine = _engine()
    key = client_key(engine, args.client) if args.client else None
    for row in delivery_log(engine, client_id=key, limit=args.limit):
        state = "delivered" if row["delivered_at"] else ("gave up" if row["gave_up_at"] else "pending")
        print(f"notice {row['id']} {row['event'].split('@')[0]} lot {row['lot_code']} -> {row['client_id']}: "
              f"{state}; attempt at {row['attempted_at']} status {row['status_code']} {row['error'] or ''}".rstrip())
    return 0
