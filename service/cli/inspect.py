"""inspect: show what was read from a spectrum file (format, axis, values, notes, quality)."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

from service.errors import UnusableInput


def register(subparsers: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = subparsers.add_parser(
        "inspect", help="show what was read from a spectrum file",
        description="Read a spectrum file (JCAMP-DX or delimited text; the format is told from the content) and "
        "show the format, points, range, units, value kind, the reader's notes and the quality findings. "
        "Exit code 0: the file was read; 2: it cannot be used.",
    )
    p.add_argument("file", metavar="FILE", help="the spectrum file")
    p.add_argument("--json", action="store_true", help="print one JSON object (with the x and y arrays)")
    p.add_argument("--x-unit", metavar="UNIT", help="abscissa unit when the file says nothing or says it wrongly: "
                   "cm-1, um or nm")
    p.add_argument("--y-kind", metavar="KIND", help="value kind: absorbance, transmittance, percent_transmittance, "
                   "reflectance or kubelka_munk")
    p.add_argument("--block", metavar="N", type=int, help="for a compound JCAMP-DX file: the block to read (1-based)")
    p.set_defaults(handler=_inspect)


def _read(args: argparse.Namespace, data: bytes, name: str) -> Any:
    from dataclasses import replace

    from service.spectra import CompoundFileError, ReaderError, read_jcamp_file, read_spectrum

    if args.block is None:
        try:
            return read_spectrum(data, file_name=name, x_unit=args.x_unit, y_kind=args.y_kind)
        except CompoundFileError as exc:
            raise ReaderError(f"{exc.message}; or choose one with --block N (1-{len(exc.blocks)})") from None
    blocks = read_jcamp_file(data, x_unit=args.x_unit, y_kind=args.y_kind)
    if not 1 <= args.block <= len(blocks):
        raise ReaderError(f"--block {args.block}: the file has {len(blocks)} block(s)")
    block = blocks[args.block - 1]
    if block.error:
        raise ReaderError(f"block {block.index} ({block.title or 'untitled'}) cannot be read: {block.error}")
    if block.spectrum is None:
        raise ReaderError(f"block {block.index} holds a peak table, not a spectrum")
    s = block.spectrum
    return replace(s, meta=replace(s.meta, file_name=name), notes=s.notes + (f"block {block.index} of {len(blocks)}",))


def _quality(spectrum: Any) -> tuple[dict[str, Any] | None, str | None]:
    from service.errors import BandgateError
    from service.spectra import YKind, assess_quality, to_absorbance

    if spectrum.kind not in (YKind.absorbance, YKind.transmittance, YKind.percent_transmittance):
        return None, f"quality checks need absorbance; not run on {spectrum.kind.value} values"
    try:
        report = assess_quality(to_absorbance(spectrum))
    except BandgateError as exc:
        return None, f"quality not assessed: {exc.message}"
    return report.as_dict(), None


def _inspect(args: argparse.Namespace) -> int:
    path = Path(args.file)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise UnusableInput(f"cannot read {path}: {exc.strerror or exc}") from None
    spectrum = _read(args, data, path.name)
    quality, quality_note = _quality(spectrum)
    lo, hi = spectrum.range_cm1
    meta = spectrum.meta
    if args.json:
        out: dict[str, Any] = {
            "file": path.name,
            "format": meta.format,
            "points": spectrum.n_points,
            "range_cm1": [lo, hi],
            "spacing_cm1": spectrum.spacing_cm1,
            "x_unit": "cm-1",
            "y_kind": spectrum.kind.value,
            "meta": meta.as_dict(),
            "notes": list(spectrum.notes),
            "quality": quality,
            "quality_note": quality_note,
            "x": spectrum.x.tolist(),
            "y": spectrum.y.tolist(),
        }
        print(json.dumps(out, ensure_ascii=False))
        return 0
    print(f"{path.name}: {meta.format}")
    if meta.title:
        print(f"  title       {meta.title}")
    print(f"  points      {spectrum.n_points}, {lo:g}–{hi:g} cm⁻¹ (stored ascending), "
          f"median spacing {spectrum.spacing_cm1:.4g} cm⁻¹")
    print(f"  values      {spectrum.kind.value}")
    extra = [("instrument", meta.instrument), ("resolution", f"{meta.resolution_cm1:g} cm⁻¹" if meta.resolution_cm1
             else ""), ("measured", meta.measured_at.isoformat(sep=" ") if meta.measured_at else ""),
             ("origin", meta.origin)]
    for label, value in extra:
        if value:
            print(f"  {label:<11} {value}")
    print(f"  sha256      {meta.sha256}")
    if spectrum.notes:
        print("  notes")
        for note in spectrum.notes:
            print(f"    - {note}")
    if quality is None:
        print(f"  quality     {quality_note}")
    else:
        print(f"  quality     {quality['outcome'].upper()} (checked on absorbance)")
        width = max(len(f["name"]) for f in quality["findings"])
        for f in quality["findings"]:
            print(f"    {f['outcome'].upper():<4}  {f['name']:<{width}}  {f['message']}")
        print("  Quality findings are advice to qualified staff; local procedures decide.")
    sys.stdout.flush()
    return 0
