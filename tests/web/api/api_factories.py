"""Factories for the API tests: a migrated database with people, a client token, a material whose
specification and reference are approved, and a qualified instrument; spectra as CSV bytes.

All spectra are synthetic (seeded Gaussian bands), labelled so in their file names.
"""

from __future__ import annotations

import os
import uuid
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

import numpy as np
import pytest
from fastapi.testclient import TestClient

from service import services as uc
from service.config import Settings
from service.release import Actor
from service.store.audit import SYSTEM_ACTOR
from service.web.app import create_app

# Group-frequency positions of an aliphatic ester (UCLA WebSpectra / UMass OWL IR tables, as quoted
# in ../shared/domain.md): C-H 2960/2875, C=O 1742, C-O 1240/1050.
ESTER_BANDS = [(2960.0, 0.35, 18.0), (2875.0, 0.2, 14.0), (1742.0, 0.9, 16.0), (1460.0, 0.2, 10.0),
               (1375.0, 0.15, 8.0), (1240.0, 0.7, 20.0), (1050.0, 0.45, 18.0)]
# A different material: broad O-H and a C-O, no carbonyl (an alcohol).
ALCOHOL_BANDS = [(3350.0, 0.6, 250.0), (2950.0, 0.4, 20.0), (1450.0, 0.2, 12.0), (1050.0, 0.8, 25.0)]
# Polystyrene film check positions (Ph. Eur. 2.2.24, from memory as in service.spectra.polystyrene)
# with the resolution pairs' valleys kept low, so the synthetic film passes the check.
POLYSTYRENE_BANDS = [(3060.0, 0.6, 6.0), (2849.5, 0.7, 5.0), (1942.9, 0.15, 5.0), (1601.2, 0.6, 4.0),
                     (1583.0, 0.3, 3.0), (1154.5, 0.3, 4.0), (1028.3, 0.5, 4.0), (2920.0, 0.9, 8.0)]

MATERIAL = "SYN-ESTER"
SUPPLIER = "Northwind Excipients (synthetic)"
INSTRUMENT = "FTIR-01"


def spectrum_csv(bands: list[tuple[float, float, float]], *, lo: float = 600.0, hi: float = 4000.0,
                 points: int = 3600, seed: int = 0, noise: float = 0.0005) -> bytes:
    """A synthetic absorbance spectrum as two-column CSV (wavenumber, absorbance), ``points`` points."""
    x = np.linspace(lo, hi, points)
    y = 0.02 + np.zeros_like(x)
    for centre, height, fwhm in bands:
        y = y + height * np.exp(-4 * np.log(2) * ((x - centre) / fwhm) ** 2)
    y = y + np.random.default_rng(seed).normal(0.0, noise, x.size)
    lines = ["wavenumber_cm-1,absorbance"] + [f"{a:.4f},{b:.6f}" for a, b in zip(x, y)]
    return ("\n".join(lines) + "\n").encode()


def spec_document(**changes: Any) -> dict[str, Any]:
    doc: dict[str, Any] = {
        "material": MATERIAL, "name": "synthetic ester", "version": 1, "preparation": "atr-znse",
        "range": [3800, 650], "fingerprint": {"metric": "pearson", "min_score": 0.95},
        "required_bands": [{"label": "C=O ester", "from": 1750, "to": 1735, "min_relative_intensity": 0.3}],
    }
    doc.update(changes)
    return doc


@dataclass
class Lab:
    client: TestClient
    engine: Any
    token: str
    read_token: str
    tech: Actor
    qa: Actor

    def auth(self, token: str | None = None) -> dict[str, str]:
        return {"Authorization": f"Bearer {token or self.token}"}


def make_lab(db_url: str, *, max_upload_bytes: int = 10 * 1024 * 1024, spectra: bool = True) -> Lab:
    """The lab; with ``spectra`` also a passing instrument check and an approved spec and reference."""
    from service.services.security_clients import create_token

    app = create_app(Settings(database_url=db_url, max_upload_bytes=max_upload_bytes))
    engine = app.state.engine
    uc.create_user(engine, SYSTEM_ACTOR, username="tina.tech", printed_name="Tina Tech", roles=("technician",))
    uc.create_user(engine, SYSTEM_ACTOR, username="quinn.qa", printed_name="Quinn QA", roles=("quality",))
    tech, qa = uc.get_actor(engine, "tina.tech"), uc.get_actor(engine, "quinn.qa")
    token = create_token(engine, client="lis", scopes="read,submit,manage")
    read_token = create_token(engine, client="dashboard", scopes="read")
    uc.create_material(engine, qa, code=MATERIAL, name="Ester (synthetic)")
    uc.create_supplier(engine, qa, name=SUPPLIER)
    uc.approve_supplier(engine, qa, material_code=MATERIAL, supplier_name=SUPPLIER, reduced_plan=False)
    uc.register_instrument(engine, qa, code=INSTRUMENT, kind="FT-IR, diamond ATR", location="goods-in")
    if not spectra:
        return Lab(client=TestClient(app), engine=engine, token=token, read_token=read_token, tech=tech, qa=qa)
    check = uc.record_instrument_check(engine, tech, instrument_code=INSTRUMENT,
                                       data=spectrum_csv(POLYSTYRENE_BANDS, points=6801, noise=0.0002),
                                       file_name="polystyrene-synthetic.csv")
    assert check.passed, check.result
    spec = uc.create_spec_draft(engine, qa, material_code=MATERIAL, document=spec_document())
    uc.approve_spec_version(engine, qa, spec_version_id=spec.id, reason="method validated (synthetic)")
    ref = uc.add_reference(engine, qa, material_code=MATERIAL, preparation="atr-znse",
                           data=spectrum_csv(ESTER_BANDS, seed=2), file_name="ester-reference-synthetic.csv",
                           instrument_code=INSTRUMENT)
    uc.approve_reference(engine, qa, reference_id=ref.id, reason="reference qualified (synthetic)")
    return Lab(client=TestClient(app), engine=engine, token=token, read_token=read_token, tech=tech, qa=qa)


def _module_database(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    """A migrated database of the parametrised back-end, shared by one test module (tests use fresh lots)."""
    from service.store.migrations import upgrade

    if request.param == "sqlite":
        url = f"sqlite:///{tmp_path_factory.mktemp('api') / 'bandgate.db'}"
        upgrade(url)
        yield url
        return
    pg = os.environ.get("BANDGATE_TEST_POSTGRES_URL", "")
    if not pg:
        if os.environ.get("BANDGATE_REQUIRE_POSTGRES") == "1":
            pytest.fail("BANDGATE_REQUIRE_POSTGRES=1 but BANDGATE_TEST_POSTGRES_URL is not set")
        pytest.skip("PostgreSQL not configured: set BANDGATE_TEST_POSTGRES_URL to run this")
    import psycopg

    admin = pg.replace("postgresql+psycopg://", "postgresql://")
    name = f"bandgate_api_{uuid.uuid4().hex[:12]}"
    with psycopg.connect(admin, autocommit=True) as conn:
        conn.execute(f'CREATE DATABASE "{name}"')
    url = f"{pg.rpartition('/')[0]}/{name}"
    try:
        upgrade(url)
        yield url
    finally:
        with psycopg.connect(admin, autocommit=True) as conn:
            conn.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


BACKENDS = ["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)]


@pytest.fixture(scope="module", params=BACKENDS)
def lab(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory) -> Iterator[Lab]:
    """The whole lab with spectra, on each back-end, shared by the tests of one module."""
    gen = _module_database(request, tmp_path_factory)
    made = make_lab(next(gen))
    yield made
    made.engine.dispose()
    gen.close()


@pytest.fixture(scope="module", params=BACKENDS)
def bare_lab(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory) -> Iterator[Lab]:
    """People, tokens, material, supplier and instrument; no spectra read (for the refusal tests)."""
    gen = _module_database(request, tmp_path_factory)
    made = make_lab(next(gen), spectra=False)
    yield made
    made.engine.dispose()
    gen.close()


def lot_body(**changes: Any) -> dict[str, Any]:
    body: dict[str, Any] = {"material": MATERIAL, "supplier": SUPPLIER, "supplier_lot": "NW-7781",
                            "containers": 2, "received_on": "2026-12-01", "retest_on": "2028-12-01"}
    body.update(changes)
    return body


def upload(lab: Lab, code: str, *, container: int, data: bytes, name: str = "sample-synthetic.csv",
           headers: dict[str, str] | None = None, operator: str = "tina.tech") -> Any:
    return lab.client.post(
        f"/api/v1/lots/{code}/measurements", headers={**lab.auth(), **(headers or {})},
        data={"container": str(container), "instrument": INSTRUMENT, "operator": operator},
        files={"file": (name, data, "text/csv")},
    )
