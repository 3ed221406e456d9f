"""audit verify | audit export: check the audit trail and write a lot's record."""

from __future__ import annotations

import argparse
import sys


def register(subparsers: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = subparsers.add_parser("audit", help="verify the audit trail or export a lot's record",
                              description="Verify the hash-chained audit trail or export a lot's record.")
    sub = p.add_subparsers(dest="audit_command", metavar="ACTION")
    v = sub.add_parser("verify", help="recompute the chain, file hashes and signature digests",
                       description="Recompute every audit event's hash and link, every stored file's SHA-256 "
                       "and every signature's record digest. Exits 1 naming the first broken link.")
    v.add_argument("--all", action="store_true", help="list every problem, not only the first")
    v.add_argument("--json", action="store_true", help="print the report as one JSON object")
    v.set_defaults(handler=_verify)
    e = sub.add_parser("export", help="write one lot's record as JSON or CSV",
                       description="Write a lot's record (plan, containers, measurements, signatures, audit "
                       "events) in a human-readable form.")
    e.add_argument("--lot", required=True, metavar="CODE", help="internal lot code, e.g. IN-2026-00001")
    e.add_argument("--format", choices=("json", "csv"), default="json", help="output format (default json)")
    e.add_argument("--output", "-o", metavar="FILE", help="write to FILE instead of standard output")
    e.set_defaults(handler=_export)
    p.set_defaults(handler=lambda _a: (p.print_help(), 2)[1])


def _engine():  # type: ignore[no-untyped-def]
    from service.config import get_settings
    from service.store.engine import make_engine
    from service.store.migrations import ensure_at_head

    url = get_settings().database_url
    engine = make_engine(url)
    ensure_at_head(engine, url)
    return engine


def _verify(args: argparse.Namespace) -> int:
    from service.services.audit_trail import verify_audit

    report = verify_audit(_engine())
    if args.json:
        import json

        print(json.dumps(report.as_dict(), indent=2))
        return 0 if report.ok else 1
    if report.ok:
        print(f"audit trail verified: {report.events} events, {report.files} stored files, "
              f"{report.signatures} signatures; no broken link")
        return 0
    shown = report.problems if args.all else report.problems[:1]
    print(f"audit trail BROKEN: {len(report.problems)} problem(s) in {report.events} events, "
          f"{report.files} files, {report.signatures} signatures", file=sys.stderr)
    for line in shown:
        print(f"  first broken link: {line}" if line is report.problems[0] else f"  {line}", file=sys.stderr)
    return 1


def _export(args: argparse.Namespace) -> int:
    from service.services.audit_trail import export_lot

    text = export_lot(_engine(), args.lot, fmt=args.format)
    if args.output:
        with open(args.output, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
    else:
        sys.stdout.write(text)
        if not text.endswith("\n"):
            sys.stdout.write("\n")
    return 0
