"""Regression snapshot of the evaluator: record every result once, compare after a change.

Not a test module (pytest does not collect it): a tool for work on the evaluator's speed, where
results must not move. ``write PATH`` evaluates a fixed set of cases and pickles, per case, the
stored document (``Evaluation.as_dict()``), the unrounded criteria and the sample's prepared
arrays; ``compare PATH`` evaluates again and reports every difference (numbers beyond ``--rtol``
relative, anything else not identical). Exit code 0 when nothing differs.

Cases: every committed demo file (synthetic) against its material's specification, reference and
the demo library, as ``bandgate evaluate`` runs them, also in transmittance and under the other
metrics and baselines; the bench's synthetic case; and spectra of ``../shared/data`` (read in
place: PlotFTIR five-material ATR set and diesel/biodiesel series, GPL-3, Natural Resources
Canada; Hodgkins et al. 2018 plant/paper ATR-MIR set, CC BY 4.0) against specifications of our own.

    PYTHONPATH=. python tests/evaluation/evaluation_snapshot.py write /tmp/before.pkl
    PYTHONPATH=. python tests/evaluation/evaluation_snapshot.py compare /tmp/before.pkl
"""

from __future__ import annotations

import argparse
import copy
import json
import math
import pickle
import sys
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np

from service.evaluation import Method, ReferenceLibrary, evaluate, parse_specification, prepare
from service.evaluation.method import as_absorbance
from service.spectra import Spectrum, read_spectrum, to_transmittance
from service.spectra.model import SpectrumMeta

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_data"
SHARED = ROOT.parent / "shared" / "data"

Case = tuple[str, Spectrum, dict[str, Any], Spectrum, "ReferenceLibrary | None"]


def _read(path: Path) -> Spectrum:
    return read_spectrum(path.read_bytes(), file_name=path.name)


def _variants(doc: dict[str, Any]) -> Iterator[tuple[str, dict[str, Any]]]:
    yield "", doc
    for metric in ("pearson", "first-derivative", "euclidean"):
        fp = doc.get("fingerprint") or {}
        if fp.get("metric") == metric:
            continue
        d = copy.deepcopy(doc)
        d["fingerprint"] = ({"metric": metric, "max_distance": 0.3} if metric == "euclidean"
                            else {"metric": metric, "min_score": 0.9})
        yield f" [{metric}]", d
    for baseline in ("rubberband", "none"):
        d = copy.deepcopy(doc)
        d["preprocessing"] = {"baseline": baseline}
        yield f" [{baseline}]", d


def _demo_cases() -> Iterator[Case]:
    manifest = json.loads((DEMO / "scenario.json").read_text(encoding="utf-8"))
    library = ReferenceLibrary.build([(f.stem, _read(f)) for f in sorted((DEMO / "library").glob("*.jdx"))])
    files: list[tuple[str, str]] = [(lot["material"], m["file"]) for lot in manifest["lots"]
                                    for m in lot["measurements"]]
    files += [("SOL-204", "samples/SOL-204_lot-PEL-GLY-1187_c1_remeasured.jdx"),
              ("EXC-101", "bench/EXC-101_3600-points.jdx")]
    files += [(m["code"], m["reference"]) for m in manifest["materials"]]
    for material, file in files:
        doc = json.loads((DEMO / "specs" / f"{material}.json").read_text(encoding="utf-8"))
        sample, reference = _read(DEMO / file), _read(DEMO / "library" / f"{material}.jdx")
        for tag, d in _variants(doc):
            yield f"demo {file}{tag}", sample, d, reference, library
        yield f"demo {file} [transmittance, no library]", to_transmittance(sample), doc, reference, None


def _bench_case() -> Iterator[Case]:
    from service.bench.evaluation import _evaluation_setup

    sample, spec, reference = _evaluation_setup()
    doc = spec.as_document()
    yield "bench case", sample, doc, reference, None
    x, y = sample.x, sample.y
    dip = y - 0.6 * np.exp(-4 * np.log(2) * ((x - 1500.0) / 40.0) ** 2)  # a negative band
    yield "bench case, negative band", Spectrum.create(x, dip, "absorbance"), doc, reference, None
    yield "bench case, every 3rd point", Spectrum.create(x[::3], y[::3], "absorbance"), doc, reference, None
    yield "bench case, cropped", Spectrum.create(x[x > 900], y[x > 900], "absorbance"), doc, reference, None
    edge = y + 0.5 * np.exp(-4 * np.log(2) * ((x - 2211.0) / 6.0) ** 2)  # a forbidden band at its window's edge
    yield "bench case, forbidden band at the edge", Spectrum.create(x, edge, "absorbance"), doc, reference, None


def _wide(name: str) -> dict[str, Spectrum]:
    data = np.loadtxt(SHARED / name, delimiter=",", skiprows=1)
    header = (SHARED / name).read_text(encoding="utf-8").splitlines()[0].split(",")[1:]
    return {col: Spectrum.create(data[:, 0], data[:, i + 1], "absorbance",
                                 meta=SpectrumMeta(title=col, file_name=name)) for i, col in enumerate(header)}


def _shared_cases() -> Iterator[Case]:
    if not SHARED.is_dir():
        print(f"note: {SHARED} is absent; shared-data cases skipped", file=sys.stderr)
        return
    five = _wide("real-atr-five-materials.csv")
    lib = ReferenceLibrary.build(list(five.items()))
    ipa = {"material": "isopropanol", "name": "isopropanol", "version": 1, "preparation": "atr-diamond",
           "range": [3900, 750],
           "required_bands": [{"label": "O-H", "from": 3550, "to": 3200, "min_relative_intensity": 0.2,
                               "min_width": 100},
                              {"label": "C-O", "from": 1170, "to": 1110, "min_relative_intensity": 0.2}],
           "forbidden_bands": [{"label": "C=O", "from": 1760, "to": 1690, "max_relative_intensity": 0.05}],
           "fingerprint": {"metric": "pearson", "min_score": 0.95}}
    for name, s in five.items():
        for tag, d in _variants(ipa):
            yield f"five-material {name} vs isopropanol{tag}", s, d, five["isopropanol"], lib
    series = _wide("real-atr-diesel-biodiesel-series.csv")
    names = list(series)
    diesel = {"material": "diesel", "name": "diesel", "version": 1, "preparation": "atr-diamond",
              "range": [3900, 750],
              "required_bands": [{"label": "C-H", "from": 2990, "to": 2850, "min_relative_intensity": 0.3}],
              "forbidden_bands": [{"label": "ester C=O", "from": 1760, "to": 1730, "max_relative_intensity": 0.01}],
              "fingerprint": {"metric": "first-derivative", "min_score": 0.99}}
    for name in names:
        yield f"biodiesel {name}", series[name], diesel, series[names[0]], None
    plant = _wide("real-atr-plant-paper-materials.csv")
    pnames = list(plant)
    leaf = {"material": "plant", "name": "plant material", "version": 1, "preparation": "atr-diamond",
            "range": [3900, 700], "exclude": [[2400, 1900]],
            "required_bands": [{"label": "O-H", "from": 3600, "to": 3000, "min_width": 50},
                               {"label": "C-O", "from": 1100, "to": 1000, "min_relative_intensity": 0.3}],
            "fingerprint": {"metric": "pearson", "regions": [[1800, 700]], "min_score": 0.9},
            "quality": {"max_absorbance": 1.5, "min_absorbance": 0.005}}  # these ATR spectra are weak
    plib = ReferenceLibrary.build([(n, plant[n]) for n in pnames[::7]])
    for name in pnames[::3]:
        for tag, d in _variants(leaf):
            yield f"plant/paper {name}{tag}", plant[name], d, plant[pnames[0]], plib


def cases() -> Iterator[Case]:
    yield from _bench_case()
    yield from _demo_cases()
    yield from _shared_cases()


def _raw(e: Any) -> list[dict[str, Any]]:
    return [{"label": c.label, "measured": c.measured, "limit": c.limit, "outcome": c.outcome, "message": c.message,
             "details": c.details} for c in e.criteria]


def snapshot() -> dict[str, dict[str, Any]]:
    out: dict[str, dict[str, Any]] = {}
    for label, sample, doc, reference, library in cases():
        spec = parse_specification(doc)
        e = evaluate(sample, spec, reference, library)
        entry: dict[str, Any] = {"document": e.as_dict(), "raw": _raw(e), "summary": e.summary()}
        try:
            p = prepare(as_absorbance(sample), Method.for_specification(spec))
            entry["prepared"] = {"resampled": np.array(p.resampled), "corrected": np.array(p.corrected),
                                 "final": np.array(p.final), "vector": np.array(p.vector),
                                 "reference_height": p.reference_height,
                                 "bands": [b.__dict__.copy() for b in p.bands]}
        except ValueError as exc:
            entry["prepared"] = f"{type(exc).__name__}: {exc}"
        if label in out:
            raise SystemExit(f"duplicate case label {label!r}")
        out[label] = entry
    return out


def _diff(a: Any, b: Any, path: str, rtol: float, found: list[str]) -> None:
    if isinstance(a, np.ndarray) or isinstance(b, np.ndarray):
        a, b = np.asarray(a), np.asarray(b)
        if a.shape != b.shape:
            found.append(f"{path}: shape {a.shape} != {b.shape}")
            return
        scale = max(float(np.max(np.abs(a))) if a.size else 0.0, 1e-300)
        worst = float(np.max(np.abs(a - b))) if a.size else 0.0
        if worst > rtol * scale:
            found.append(f"{path}: max difference {worst:.3g} (scale {scale:.3g})")
        return
    if isinstance(a, bool) or isinstance(b, bool) or not (isinstance(a, (int, float)) and isinstance(b, (int, float))):
        if type(a) is not type(b) and not (a is None or b is None):
            found.append(f"{path}: type {type(a).__name__} != {type(b).__name__}")
        elif isinstance(a, dict):
            if list(a) != list(b):
                found.append(f"{path}: keys {list(a)} != {list(b)}")
            for k in a:
                if k in b:
                    _diff(a[k], b[k], f"{path}.{k}", rtol, found)
        elif isinstance(a, (list, tuple)):
            if len(a) != len(b):
                found.append(f"{path}: length {len(a)} != {len(b)}")
            for i, (x, y) in enumerate(zip(a, b)):
                _diff(x, y, f"{path}[{i}]", rtol, found)
        elif a != b:
            found.append(f"{path}: {a!r} != {b!r}")
        return
    if type(a) is not type(b):
        found.append(f"{path}: type {type(a).__name__} != {type(b).__name__} ({a!r}, {b!r})")
    if math.isnan(a) and math.isnan(b):
        return
    if not math.isclose(a, b, rel_tol=rtol, abs_tol=1e-300):
        found.append(f"{path}: {a!r} != {b!r}")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("action", choices=("write", "compare"))
    ap.add_argument("path")
    ap.add_argument("--rtol", type=float, default=1e-9)
    args = ap.parse_args(argv)
    now = snapshot()
    if args.action == "write":
        Path(args.path).write_bytes(pickle.dumps(now))
        print(f"{len(now)} cases written to {args.path}")
        return 0
    before = pickle.loads(Path(args.path).read_bytes())
    found: list[str] = []
    if list(before) != list(now):
        found.append(f"case lists differ: {sorted(set(before) ^ set(now))}")
    for label in before:
        if label in now:
            _diff(before[label], now[label], label, args.rtol, found)
    exact = sum(before[k]["document"] == now[k]["document"] for k in before if k in now)
    for line in found[:60]:
        print(line)
    print(f"{len(now)} cases; {exact} stored documents identical; {len(found)} difference(s) beyond rtol={args.rtol:g}")
    return 1 if found else 0


if __name__ == "__main__":
    raise SystemExit(main())
