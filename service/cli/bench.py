"""bench: time the project's hot paths (see service.bench)."""

from __future__ import annotations

import argparse
import json
from typing import Any

from service import __version__


def register(subparsers: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = subparsers.add_parser(
        "bench", help="time the hot paths on generated data",
        description="Time the project's own hot paths on generated data: medians over several repeats, "
        "with the aims the issues set. Figures quoted anywhere come from here.",
    )
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--only", metavar="AREA", help="run only the bench modules whose name contains AREA")
    p.set_defaults(handler=_bench)


def _bench(args: argparse.Namespace) -> int:
    from service.bench import BenchReport, BenchResult, discover, time_case

    out: dict[str, Any] = {"version": __version__, "areas": {}}
    for name, module in discover(args.only):
        rows: list[dict[str, Any]] = []
        results: dict[str, BenchResult] = {}
        for case in module.cases():
            if isinstance(case, BenchReport):
                rows.append({"name": case.name, "aim": case.aim, **case.figures})
                continue
            res = time_case(case)
            results[res.name] = res
            rows.append(res.as_dict())
        derive = getattr(module, "derived", None)
        if derive is not None:
            rows.extend(derive(results))
        out["areas"][name] = rows
        if not args.json:
            print(f"== {name}")
            for row in rows:
                figures = ", ".join(f"{k}={v}" for k, v in row.items() if k not in ("name", "aim"))
                aim = f"   [aim: {row['aim']}]" if row.get("aim") else ""
                print(f"  {row['name']}: {figures}{aim}")
    if args.json:
        print(json.dumps(out, indent=2))
    return 0
