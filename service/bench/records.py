"""Record keeping: receive a lot, record an evaluated measurement, decide, verify the audit trail.

Runs on a fresh SQLite file (WAL, synchronous=FULL) with SYNTHETIC spectra generated here
(Lorentzian bands; no real material), so the figures show the cost of the record keeping and
its audit chain around the evaluator, on the default database.
"""

from __future__ import annotations

import tempfile
from datetime import date
from pathlib import Path
from typing import Any

import numpy as np

from service.bench import BenchCase

_BANDS = [(2950, 0.5, 12), (1715, 0.9, 8), (1600, 0.35, 5), (1450, 0.4, 8), (1250, 0.7, 10), (1050, 0.6, 9),
          (820, 0.3, 6)]
_PS = [(3082, 0.25, 4), (3060.0, 0.45, 4), (3026, 0.6, 4), (2924, 0.9, 8), (2849.5, 0.55, 4), (1942.9, 0.12, 6),
       (1601.2, 0.35, 3), (1583.0, 0.2, 2.5), (1493, 0.9, 4), (1452, 0.85, 5), (1154.5, 0.15, 3),
       (1028.3, 0.3, 3), (757, 1.0, 5), (698, 1.2, 5)]


def _csv(bands: list[tuple[float, float, float]], *, step: float, noise: float = 0.0, seed: int = 0) -> bytes:
    """A SYNTHETIC absorbance spectrum as CSV: Lorentzian bands on a small offset, seeded noise."""
    x = np.arange(4000.0, 599.0, -step)[::-1]
    y = np.full_like(x, 0.02)
    for pos, height, hw in bands:
        y += height / (1.0 + ((x - pos) / hw) ** 2)
    if noise:
        y = y + np.random.default_rng(seed).normal(0.0, noise, x.size)
    return ("wavenumber,absorbance\n" + "\n".join(f"{a:.3f},{b:.6f}" for a, b in zip(x, y)) + "\n").encode()


class _World:
    def __init__(self) -> None:
        from service import services as uc
        from service.store.audit import SYSTEM_ACTOR
        from service.store.engine import make_engine
        from service.store.migrations import upgrade

        url = f"sqlite:///{Path(tempfile.mkdtemp(prefix='bandgate-bench-records-')) / 'bench.db'}"
        upgrade(url)
        self.engine = make_engine(url)
        e = self.engine
        for name, role in (("bench.tech", "technician"), ("bench.qa", "quality")):
            uc.create_user(e, SYSTEM_ACTOR, username=name, printed_name=name, roles=[role])
        self.tech, self.qa = uc.get_actor(e, "bench.tech"), uc.get_actor(e, "bench.qa")
        uc.register_instrument(e, self.qa, code="BENCH-IR", kind="synthetic")
        uc.record_instrument_check(e, self.tech, instrument_code="BENCH-IR", data=_csv(_PS, step=0.5))
        uc.create_material(e, self.qa, code="SYN-1", name="Synthetic material (bench)")
        uc.create_supplier(e, self.qa, name="Bench supplier")
        uc.approve_supplier(e, self.qa, material_code="SYN-1", supplier_name="Bench supplier")
        ref = uc.add_reference(e, self.qa, material_code="SYN-1", preparation="atr-diamond",
                               data=_csv(_BANDS, step=0.94), file_name="ref.csv")
        uc.approve_reference(e, self.qa, reference_id=ref.id)
        spec = uc.create_spec_draft(e, self.qa, material_code="SYN-1", document={
            "material": "SYN-1", "name": "Synthetic", "version": 1, "preparation": "atr-diamond",
            "range": [3200, 700], "fingerprint": {"metric": "pearson", "min_score": 0.95},
            "required_bands": [{"label": "carbonyl", "from": 1740, "to": 1690}]})
        uc.approve_spec_version(e, self.qa, spec_version_id=spec.id)
        self.sample = _csv(_BANDS, step=0.94, noise=0.002, seed=1)  # 3,618 points
        self.new_lot()

    def new_lot(self) -> None:
        """A lot of 200 containers (every one tested): a large but real delivery."""
        from service import services as uc

        self.lot = uc.receive_lot(self.engine, self.tech, material_code="SYN-1", supplier_name="Bench supplier",
                                  supplier_lot="B-1", containers=200, received_on=date(2026, 12, 1))
        self.containers = iter(range(1, 201))


_world: _World | None = None


def _get() -> _World:
    global _world
    if _world is None:
        _world = _World()
    return _world


def _record(w: _World) -> None:
    from service import services as uc

    number = next(w.containers, None)
    if number is None:
        w.new_lot()
        number = next(w.containers)
    uc.record_measurement(w.engine, w.tech, lot_code=w.lot.code, container=number,
                          instrument_code="BENCH-IR", data=w.sample, file_name="s.csv")


def _receive(w: _World) -> None:
    from service import services as uc

    uc.receive_lot(w.engine, w.tech, material_code="SYN-1", supplier_name="Bench supplier", supplier_lot="B-2",
                   containers=20, received_on=date(2026, 12, 1))


def _verify(w: _World) -> Any:
    from service import services as uc

    report = uc.verify_audit(w.engine)
    assert report.ok, report.problems
    return report


def _evaluate_only(w: _World) -> None:
    from service.evaluation import parse_specification
    from service.services import evaluator

    spec = parse_specification(uc_spec(w))
    sample = evaluator.read_spectrum(w.sample, file_name="s.csv")
    ref = w._ref if hasattr(w, "_ref") else None
    if ref is None:
        from service import services as uc

        _view, data = uc.reference_file(w.engine, 1)
        ref = w._ref = evaluator.read_spectrum(data, file_name="ref.csv")  # type: ignore[attr-defined]
    evaluator.evaluate(sample=sample, spec=spec, reference=ref)


def uc_spec(w: _World) -> dict[str, Any]:
    from service import services as uc

    return uc.effective_spec(w.engine, "SYN-1").document


def cases() -> list[BenchCase]:
    return [
        BenchCase("read + evaluate one 3,618-point upload (no database)", _evaluate_only, setup=_get, repeats=20),
        BenchCase("record_measurement: store bytes, evaluate, audit, settle (SQLite)", _record, setup=_get,
                  repeats=30, aim="the evaluation itself costs a few ms; the record keeping should not add much"),
        BenchCase("receive_lot, 20 containers (SQLite)", _receive, setup=_get, repeats=10),
        BenchCase("audit verify (whole chain, files, signatures)", _verify, setup=_get, repeats=3),
    ]


def derived(results: dict[str, Any]) -> list[dict[str, Any]]:
    ev = results.get("read + evaluate one 3,618-point upload (no database)")
    rec = results.get("record_measurement: store bytes, evaluate, audit, settle (SQLite)")
    if not ev or not rec:
        return []
    w = _get()
    from service import services as uc

    events = uc.verify_audit(w.engine).events
    return [{"name": "record keeping overhead per upload", "aim": "",
             "median_ms": round(rec.median_ms - ev.median_ms, 2),
             "uploads_per_second_single_writer": round(1000.0 / rec.median_ms, 1),
             "audit_events_in_chain_at_end": events}]
