"""Write the demo data set: specifications, references, lot samples, polystyrene checks, manifest.

Run ``python -m demo_data.generate [OUT_DIR]`` (default: this folder) or call :func:`generate`.
Everything is seeded: the same code writes the same files, byte for byte. Each file gets its own
seed derived from its name, so adding a file never changes the others.
"""

from __future__ import annotations

import argparse
import json
import sys
import zlib
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from demo_data import materials, scenario
from demo_data.synth import Acquisition, BandShape, grid, measure

BASE_SEED = 20261202
HERE = Path(__file__).resolve().parent
SYNTHETIC = "SYNTHETIC DEMO DATA - generated, not measured; Bandgate demo, invented scenario"
SUBDIRS = ("specs", "library", "samples", "instrument", "bench", "csv")

# Reference spectra are measured more carefully than routine lots: less noise, flatter baseline.
REFERENCE_ACQUISITION = Acquisition(position_jitter=0.0, height_jitter=0.0, offset=0.005, slope=0.005,
                                    curvature=0.002, noise_sd=0.0008)


@dataclass(frozen=True, kw_only=True)
class Generated:
    """One generated spectrum: where it goes and what it is."""

    relpath: str         # without extension, e.g. "samples/EXC-101_lot-..._c1"
    title: str
    x: np.ndarray
    y: np.ndarray
    comments: tuple[str, ...]


def seed_for(name: str) -> int:
    """A stable seed per file name (CRC-32 of the name mixed with the base seed)."""
    return (BASE_SEED ^ zlib.crc32(name.encode("utf-8"))) & 0xFFFFFFFF


def _rng(name: str) -> np.random.Generator:
    return np.random.Generator(np.random.PCG64(seed_for(name)))


def _spectrum(relpath: str, title: str, bands: tuple[BandShape, ...], acq: Acquisition,
              comments: tuple[str, ...], x: np.ndarray | None = None) -> Generated:
    xs = grid() if x is None else x
    y = measure(xs, bands, acq, _rng(relpath))
    return Generated(relpath=relpath, title=title, x=xs, y=np.round(y, 5), comments=comments)


def references() -> list[Generated]:
    out = []
    for m in materials.MATERIALS:
        out.append(_spectrum(
            f"library/{m.code}", f"{m.code} {m.name} - reference spectrum - {SYNTHETIC}",
            m.bands, REFERENCE_ACQUISITION,
            (f"material {m.code} {m.name}; preparation {m.preparation}",
             "reference spectrum of the demo library; approved in the seeded demo database"),
        ))
    return out


def _sample(meas: scenario.DemoMeasurement, lot: scenario.DemoLot | None) -> Generated:
    content = materials.BY_CODE[meas.content]
    bands = content.bands + meas.extra_bands
    label = materials.BY_CODE[lot.material if lot else meas.content]
    where = f"lot {lot.supplier_lot} of {label.code} {label.name}" if lot else f"{label.code} {label.name}"
    comments = [f"{where}, container {meas.container}; preparation {label.preparation}",
                f"scenario: expected verdict {meas.expect}" + (f" ({meas.why})" if meas.why else "")]
    if meas.content != label.code:
        comments.append(f"scenario: the container really holds {content.code} {content.name}")
    return _spectrum(f"samples/{meas.file_stem}", f"{meas.file_stem} - {SYNTHETIC}", bands,
                     meas.acquisition, tuple(comments))


def samples() -> list[Generated]:
    out = [_sample(meas, lot) for lot in scenario.LOTS for meas in lot.measurements]
    out.append(_sample(scenario.REMEASURED_GLYCEROL, None))
    return out


def polystyrene() -> list[Generated]:
    """A passing polystyrene film (Ph. Eur. 2.2.24 check bands) and one with a shifted wavenumber scale."""
    x = grid(high=4000.0, low=450.0, step=1.0)
    acq = Acquisition(position_jitter=0.05, height_jitter=0.01, offset=0.02, slope=0.01, noise_sd=0.001)
    passing = _spectrum("instrument/polystyrene-film_pass", f"Polystyrene film, about 35 um - {SYNTHETIC}",
                        materials.POLYSTYRENE_FILM, acq,
                        ("instrument check film; band positions per Ph. Eur. 2.2.24; expected: check passes",), x)
    shifted_bands = tuple(BandShape(position=b.position + 2.5, height=b.height, fwhm=b.fwhm, eta=b.eta)
                          for b in materials.POLYSTYRENE_FILM)
    shifted = _spectrum("instrument/polystyrene-film_scale-shifted",
                        f"Polystyrene film, wavenumber scale off by +2.5 cm-1 - {SYNTHETIC}", shifted_bands, acq,
                        ("instrument check film with a drifted wavenumber scale; expected: check fails",), x)
    return [passing, shifted]


def bench() -> list[Generated]:
    """One 3,600-point sample (4000-401 cm-1 at 1 cm-1) for benchmarks."""
    m = materials.MICROCRYSTALLINE_CELLULOSE
    x = grid(high=4000.0, low=401.0, step=1.0)
    return [_spectrum("bench/EXC-101_3600-points", f"EXC-101 sample, 3,600 points - {SYNTHETIC}", m.bands,
                      Acquisition(), (f"{m.code} {m.name}; benchmark input; expected verdict pass",), x)]


def all_spectra() -> list[Generated]:
    return references() + samples() + polystyrene() + bench()


# --- writers -------------------------------------------------------------------------------------

def _csv_text(g: Generated) -> str:
    lines = [f"wavenumber_cm-1,absorbance_{_csv_label()}"]
    for xv, yv in zip(g.x[::-1], g.y[::-1]):  # descending, as most instruments export
        lines.append(f"{xv:.1f},{yv:.5f}")
    return "\n".join(lines) + "\n"


def _csv_label() -> str:
    return "synthetic_demo_data"


def _jcamp_writer() -> Callable[[Generated], str]:
    from service.spectra import SpectrumMeta, YKind, write_jcamp
    from service.spectra.model import Spectrum

    def write(g: Generated) -> str:
        spectrum = Spectrum.create(g.x, g.y, YKind.absorbance,
                                   meta=SpectrumMeta(title=g.title, origin=scenario.COMPANY))
        # Values are rounded to 1e-5 absorbance, so that is the natural Y factor (compact DIFDUP text).
        text = write_jcamp(spectrum, form="difdup", owner="synthetic demo data, free to use", y_factor=1e-5)
        return _with_comments(text, (SYNTHETIC, *g.comments))

    return write


def _with_comments(text: str, comments: tuple[str, ...]) -> str:
    """Put ``$$`` comment lines right after ``##TITLE=`` unless the writer already wrote them."""
    if SYNTHETIC in "".join(line for line in text.splitlines() if line.startswith("$$")):
        return text
    lines = text.splitlines()
    i = next((k for k, line in enumerate(lines) if line.upper().startswith("##TITLE=")), 0)
    return "\n".join(lines[: i + 1] + [f"$$ {c}" for c in comments] + lines[i + 1:]) + "\n"


def manifest() -> dict[str, Any]:
    """The scenario as JSON: what the seeding creates and which file each measurement uploads."""
    return {
        "synthetic": SYNTHETIC,
        "company": scenario.COMPANY,
        "site": scenario.SITE,
        "materials": [
            {"code": m.code, "name": m.name, "description": m.description, "preparation": m.preparation,
             "specification": f"specs/{m.code}.json", "reference": f"library/{m.code}.jdx"}
            for m in materials.MATERIALS
        ],
        "suppliers": [
            {"code": s.code, "name": s.name, "materials": list(s.materials), "reduced_sampling": list(s.reduced_sampling)}
            for s in scenario.SUPPLIERS
        ],
        "instruments": [
            {"code": i.code, "kind": i.kind, "location": i.location, "check_age_days": i.check_age_days,
             "check_file": "instrument/polystyrene-film_pass.jdx"}
            for i in scenario.INSTRUMENTS
        ],
        "lots": [
            {"key": lot.key, "material": lot.material, "supplier": lot.supplier, "supplier_lot": lot.supplier_lot,
             "containers": lot.containers, "instrument": lot.instrument, "outcome": lot.outcome,
             "expect_refused": lot.expect_refused, "story": lot.story,
             "measurements": [
                 {"container": m.container, "file": f"samples/{m.file_stem}.jdx", "content": m.content,
                  "expect": m.expect, "why": m.why}
                 for m in lot.measurements
             ]}
            for lot in scenario.LOTS
        ],
    }


def _write(path: Path, text: str) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    with open(path, "w", encoding="utf-8", newline="\n") as fh:
        fh.write(text)


def generate(out_dir: Path | str = HERE, *, jcamp: bool = True) -> list[Path]:
    """Write every demo file under ``out_dir``; returns the paths written."""
    out = Path(out_dir)
    written: list[Path] = []
    for m in materials.MATERIALS:
        p = out / "specs" / f"{m.code}.json"
        _write(p, json.dumps(m.specification(), indent=2) + "\n")
        written.append(p)
    write_jdx = _jcamp_writer() if jcamp else None
    for g in all_spectra():
        p = out / "csv" / f"{g.relpath}.csv"
        _write(p, _csv_text(g))
        written.append(p)
        if write_jdx is not None:
            p = out / f"{g.relpath}.jdx"
            _write(p, write_jdx(g))
            written.append(p)
    p = out / "scenario.json"
    _write(p, json.dumps(manifest(), indent=2) + "\n")
    written.append(p)
    return written


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m demo_data.generate", description=__doc__.splitlines()[0])
    parser.add_argument("out_dir", nargs="?", default=str(HERE), help="folder to write into (default: demo_data/)")
    parser.add_argument("--no-jcamp", action="store_true", help="write CSV only")
    args = parser.parse_args(argv)
    paths = generate(args.out_dir, jcamp=not args.no_jcamp)
    print(f"wrote {len(paths)} files under {args.out_dir}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
