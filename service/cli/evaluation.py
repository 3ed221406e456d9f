"""evaluate, suggest-bands: the identity decision and hints for specification authors, from files."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

from service.errors import UnusableInput

EXIT_PASS, EXIT_FAIL, EXIT_INVALID = 0, 1, 3
LIBRARY_SUFFIXES = (".jdx", ".dx", ".jcamp", ".csv", ".txt", ".tsv")


def register(subparsers: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = subparsers.add_parser(
        "evaluate", help="test a sample spectrum against a material specification and its reference",
        description="Test SAMPLE against a specification (JSON) and its approved reference spectrum; with "
        "--library, also check for a mix-up with other materials. Exit code 0 pass, 1 fail, 3 invalid "
        "(measure again), 2 unusable input or specification. A pass is advice to qualified staff, not a release.",
    )
    p.add_argument("sample", metavar="SAMPLE", help="sample spectrum (JCAMP-DX or delimited text)")
    p.add_argument("--spec", required=True, metavar="SPEC.json", help="the material specification document")
    p.add_argument("--reference", required=True, metavar="REF", help="the approved reference spectrum")
    p.add_argument("--library", metavar="DIR", help="folder with one reference file per material, named by its "
                   f"material code (e.g. EXC-104.jdx); files ending in {', '.join(LIBRARY_SUFFIXES)} are read")
    p.add_argument("--top", type=int, default=5, help="library matches to report (default 5)")
    p.add_argument("--json", action="store_true", help="print the evaluation record as one JSON object")
    p.set_defaults(handler=_evaluate)

    p = subparsers.add_parser(
        "suggest-bands", help="list a reference's bands with group-frequency hints",
        description="List the bands of REFERENCE (positions, relative intensities, widths) with the usual "
        "group-frequency assignments, as a starting point for a specification's required bands.",
    )
    p.add_argument("reference", metavar="REFERENCE", help="reference spectrum (JCAMP-DX or delimited text)")
    p.add_argument("--preparation", default="atr-diamond", help="how it was prepared (default atr-diamond)")
    p.add_argument("--min-relative-intensity", type=float, default=0.05, help="smallest band listed (default 0.05)")
    p.add_argument("--json", action="store_true", help="print the bands as JSON")
    p.set_defaults(handler=_suggest)


def _read_bytes(path: str, what: str) -> bytes:
    try:
        return Path(path).read_bytes()
    except OSError as exc:
        raise UnusableInput(f"cannot read the {what} file {path}: {exc.strerror or exc}") from None


def _read(path: str, what: str):  # type: ignore[no-untyped-def]
    from service.spectra import read_spectrum  # type: ignore[attr-defined]

    data = _read_bytes(path, what)
    try:
        return read_spectrum(data, file_name=Path(path).name)
    except UnusableInput as exc:
        raise type(exc)(f"{what} {path}: {exc.message}", fields=exc.fields) from None


def _spec(path: str):  # type: ignore[no-untyped-def]
    from service.evaluation import parse_specification

    raw = _read_bytes(path, "specification")
    try:
        doc = json.loads(raw.decode("utf-8-sig"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise UnusableInput(f"specification {path} is not valid JSON ({exc}); fix the file") from None
    return parse_specification(doc)


def _library(folder: str):  # type: ignore[no-untyped-def]
    from service.evaluation import ReferenceLibrary

    root = Path(folder)
    if not root.is_dir():
        raise UnusableInput(f"library {folder} is not a folder; give a folder of reference files")
    files = sorted(f for f in root.iterdir() if f.is_file() and f.suffix.lower() in LIBRARY_SUFFIXES
                   and not f.name.startswith("."))
    if not files:
        raise UnusableInput(f"library {folder} holds no reference files ({', '.join(LIBRARY_SUFFIXES)})")
    return ReferenceLibrary.build([(f.stem, _read(str(f), "library reference")) for f in files])


def _evaluate(args: argparse.Namespace) -> int:
    from service.evaluation import evaluate

    spec = _spec(args.spec)
    sample = _read(args.sample, "sample")
    reference = _read(args.reference, "reference")
    library = _library(args.library) if args.library else None
    result = evaluate(sample, spec, reference, library, top=args.top)
    record = result.as_dict()
    if args.json:
        print(json.dumps(record, indent=2, ensure_ascii=False))
    else:
        _print_human(record)
    return {"pass": EXIT_PASS, "fail": EXIT_FAIL}.get(result.verdict, EXIT_INVALID)


def _print_human(r: dict[str, Any]) -> None:
    out = sys.stdout
    spec = r["specification"]
    print(f"{r['verdict'].upper()}  {spec['material']} v{spec['version']} ({spec['name']})", file=out)
    for reason in r["invalid_reasons"]:
        print(f"  cannot be judged: {reason['message']}", file=out)
    for c in r["criteria"]:
        print(f"  [{c['outcome']}] {c['kind']}: {c['label']} — {c['message']}", file=out)
    for w in r["warnings"]:
        print(f"  warning: {w['message']}", file=out)
    if r["matches"]:
        print("  library matches: " + ", ".join(f"{m['rank']}. {m['material']} {m['score']:.4f}"
                                                 for m in r["matches"]), file=out)
    excluded = ", ".join(f"{e['from']:g}–{e['to']:g}" for e in r["excluded_regions"])
    print(f"  excluded regions (cm⁻¹): {excluded or 'none'}", file=out)
    print(f"  {r['caution']}", file=out)


def _suggest(args: argparse.Namespace) -> int:
    from service.evaluation import PREPARATIONS
    from service.evaluation.suggest import suggest_bands

    if args.preparation not in PREPARATIONS:
        raise UnusableInput(f"unknown preparation {args.preparation!r}; use one of {', '.join(PREPARATIONS)}")
    reference = _read(args.reference, "reference")
    bands = suggest_bands(reference, preparation=args.preparation,
                          min_relative_intensity=args.min_relative_intensity)
    if args.json:
        print(json.dumps({"bands": [b.as_dict() | {"rule": b.rule()} for b in bands]}, indent=2, ensure_ascii=False))
        return 0
    print(f"{len(bands)} band(s) of {Path(args.reference).name}, strongest first (relative to the strongest band):")
    print("  position cm⁻¹  rel. int.  width cm⁻¹  description    usual assignment (group-frequency tables)")
    for b in bands:
        hint = "; ".join(b.assignments) or "—"
        print(f"  {b.position_cm1:13.1f}  {b.relative_intensity:9.2f}  {b.width_cm1:10.0f}  "
              f"{b.strength + ', ' + b.shape:13}  {hint}")
    print("Assignments are hints from general tables, not identifications; check each against the literature.")
    return 0
