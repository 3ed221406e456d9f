"""check-polystyrene: the instrument check with a polystyrene film spectrum (Ph. Eur. 2.2.24)."""

from __future__ import annotations

import argparse
import hashlib
import json
import sys
from pathlib import Path
from typing import Any

from service.errors import UnusableInput


def register(subparsers: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = subparsers.add_parser(
        "check-polystyrene", help="check wavenumber scale and resolution with a polystyrene film spectrum",
        description="Check a polystyrene film spectrum (JCAMP-DX or delimited text) against the Ph. Eur. "
        "2.2.24 band positions and resolution criteria. Exit code 0: every check passed; 1: a check "
        "failed; 2: the file cannot be used. The result is advice to qualified staff; local procedures decide.",
    )
    p.add_argument("file", metavar="FILE", help="the spectrum file")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(handler=_check)


def _check(args: argparse.Namespace) -> int:
    from service.spectra import check_polystyrene, read_spectrum

    path = Path(args.file)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise UnusableInput(f"cannot read {path}: {exc.strerror or exc}") from None
    spectrum = read_spectrum(data, file_name=path.name)
    result = check_polystyrene(spectrum)
    if args.json:
        out: dict[str, Any] = {
            "file": path.name,
            "sha256": hashlib.sha256(data).hexdigest(),
            "points": spectrum.n_points,
            "range_cm1": list(spectrum.range_cm1),
            "y_kind": spectrum.kind.value,
            "notes": list(spectrum.notes),
            **result.as_dict(),
        }
        print(json.dumps(out, indent=2, ensure_ascii=False))
    else:
        lo, hi = spectrum.range_cm1
        print(f"{path.name}: {spectrum.n_points} points, {lo:g}–{hi:g} cm⁻¹, {spectrum.kind.value}")
        width = max(len(c.name) for c in result.checks)
        for c in result.checks:
            measured = "—" if c.measured is None else f"{c.measured:g}"
            print(f"  {c.name:<{width}}  {measured:>9}  limit {c.limit:<20} {c.outcome.upper()}")
        print(f"overall: {'PASS' if result.passed else 'FAIL'} ({result.source})")
        print(result.caution)
    sys.stdout.flush()
    return 0 if result.passed else 1
