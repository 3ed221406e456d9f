"""Set-up for the HTTP bench: a lab on a fresh database, through the use cases (synthetic data).

People, an API token, a material with an approved specification and reference, a qualified
instrument, and lots with enough containers for every timed upload. Spectra are seeded Gaussian
bands at group-frequency positions (an ester), 3,600 points, as CSV.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from datetime import date
from typing import Any

import numpy as np

MATERIAL = "BENCH-ESTER"
SUPPLIER = "Bench Supplies (synthetic)"
INSTRUMENT = "BENCH-FTIR"
CONTAINERS_PER_LOT = 30
ESTER = [(2960.0, 0.35, 18.0), (2875.0, 0.2, 14.0), (1742.0, 0.9, 16.0), (1460.0, 0.2, 10.0),
         (1375.0, 0.15, 8.0), (1240.0, 0.7, 20.0), (1050.0, 0.45, 18.0)]
POLYSTYRENE = [(3060.0, 0.6, 6.0), (2849.5, 0.7, 5.0), (1942.9, 0.15, 5.0), (1601.2, 0.6, 4.0),
               (1583.0, 0.3, 3.0), (1154.5, 0.3, 4.0), (1028.3, 0.5, 4.0), (2920.0, 0.9, 8.0)]


def spectrum_csv(bands: list[tuple[float, float, float]], *, points: int = 3600, seed: int = 0,
                 noise: float = 0.0005) -> bytes:
    x = np.linspace(600.0, 4000.0, points)
    y = 0.02 + np.zeros_like(x)
    for centre, height, fwhm in bands:
        y = y + height * np.exp(-4 * np.log(2) * ((x - centre) / fwhm) ** 2)
    y = y + np.random.default_rng(seed).normal(0.0, noise, x.size)
    return ("wavenumber_cm-1,absorbance (synthetic)\n"
            + "\n".join(f"{a:.4f},{b:.6f}" for a, b in zip(x, y)) + "\n").encode()


@dataclass
class UploadScenario:
    token: str
    lots: list[str]
    sample: bytes
    runs: int

    def slot(self, run: int, i: int) -> tuple[str, int]:
        """(lot code, container) of the ``i``-th upload of run number ``run`` (each run has its own lots)."""
        if not 0 <= run < self.runs:
            raise ValueError(f"run {run} is outside the {self.runs} runs prepared")
        n = run * (len(self.lots) // self.runs) * CONTAINERS_PER_LOT + i
        return self.lots[n // CONTAINERS_PER_LOT], n % CONTAINERS_PER_LOT + 1

    def request_factory(self, run: int) -> Any:
        from service.bench.http import multipart

        def make(i: int) -> tuple[str, str, bytes, dict[str, str]]:
            code, container = self.slot(run, i)
            body, ctype = multipart(
                {"container": str(container), "instrument": INSTRUMENT, "operator": "bench.tech"},
                {"file": ("bench-sample-synthetic.csv", self.sample, "text/csv")})
            return ("POST", f"/api/v1/lots/{code}/measurements", body,
                    {"Authorization": f"Bearer {self.token}", "Content-Type": ctype})

        return make


def prepare_upload_scenario(url: str, *, uploads_per_run: int, runs: int = 3) -> UploadScenario:
    from service import services as uc
    from service.services.security_clients import create_token
    from service.store.audit import SYSTEM_ACTOR
    from service.store.engine import make_engine

    engine = make_engine(url)
    try:
        uc.create_user(engine, SYSTEM_ACTOR, username="bench.tech", printed_name="Bench Technician",
                       roles=("technician",))
        uc.create_user(engine, SYSTEM_ACTOR, username="bench.qa", printed_name="Bench QA", roles=("quality",))
        tech, qa = uc.get_actor(engine, "bench.tech"), uc.get_actor(engine, "bench.qa")
        token = create_token(engine, client="bench", scopes="read,submit")
        uc.create_material(engine, qa, code=MATERIAL, name="Ester (synthetic)")
        uc.create_supplier(engine, qa, name=SUPPLIER)
        uc.approve_supplier(engine, qa, material_code=MATERIAL, supplier_name=SUPPLIER, reduced_plan=False)
        uc.register_instrument(engine, qa, code=INSTRUMENT, kind="FT-IR, diamond ATR (bench)")
        uc.record_instrument_check(engine, tech, instrument_code=INSTRUMENT,
                                   data=spectrum_csv(POLYSTYRENE, points=6801, noise=0.0002),
                                   file_name="polystyrene-synthetic.csv")
        spec = uc.create_spec_draft(engine, qa, material_code=MATERIAL, document={
            "material": MATERIAL, "name": "ester (synthetic bench)", "version": 1, "preparation": "atr-znse",
            "range": [3800, 650], "fingerprint": {"metric": "pearson", "min_score": 0.95},
            "required_bands": [{"label": "C=O ester", "from": 1750, "to": 1735, "min_relative_intensity": 0.3}]})
        uc.approve_spec_version(engine, qa, spec_version_id=spec.id, reason="bench")
        ref = uc.add_reference(engine, qa, material_code=MATERIAL, preparation="atr-znse",
                               data=spectrum_csv(ESTER, seed=2), file_name="bench-reference-synthetic.csv")
        uc.approve_reference(engine, qa, reference_id=ref.id, reason="bench")
        per_run = -(-uploads_per_run // CONTAINERS_PER_LOT)
        lots = [uc.receive_lot(engine, qa, material_code=MATERIAL, supplier_name=SUPPLIER,
                               supplier_lot=f"BENCH-{i}", containers=CONTAINERS_PER_LOT,
                               received_on=date(2026, 12, 1)).code
                for i in itertools.islice(itertools.count(), runs * per_run)]
    finally:
        engine.dispose()
    return UploadScenario(token=token, lots=lots, sample=spectrum_csv(ESTER, seed=11), runs=runs)
