"""The demo data generator: reproducible, labelled synthetic, consistent with its own scenario."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from demo_data import generate, materials, scenario
from demo_data.synth import Acquisition, BandShape, grid, measure, pseudo_voigt

DEMO_DIR = Path(generate.__file__).resolve().parent


def _csv_only(tmp_path: Path) -> list[Path]:
    return generate.generate(tmp_path, jcamp=False)


def test_pseudo_voigt_has_its_height_at_the_centre_and_half_of_it_at_half_width() -> None:
    # Definition of the FWHM of a profile (both components share it), for any Lorentzian share.
    for eta in (0.0, 0.3, 1.0):
        band = BandShape(position=1700.0, height=0.8, fwhm=20.0, eta=eta)
        x = np.array([1690.0, 1700.0, 1710.0])
        np.testing.assert_allclose(pseudo_voigt(x, band), [0.4, 0.8, 0.4], rtol=1e-12)


def test_same_seed_same_spectrum_and_noise_is_really_random() -> None:
    x = grid()
    bands = materials.ETHANOL.bands
    a = measure(x, bands, Acquisition(), np.random.Generator(np.random.PCG64(1)))
    b = measure(x, bands, Acquisition(), np.random.Generator(np.random.PCG64(1)))
    c = measure(x, bands, Acquisition(), np.random.Generator(np.random.PCG64(2)))
    np.testing.assert_array_equal(a, b)
    assert np.abs(a - c).max() > 1e-3


def test_too_thick_sample_saturates_below_minus_log_of_stray_light() -> None:
    # Beer-Lambert with stray light s: observed A = -log10(T + s) stays below -log10(s) (common practice).
    x = grid()
    y = measure(x, materials.GLYCEROL.bands, Acquisition(scale=5.0, stray_light=0.005, noise_sd=0.0),
                np.random.Generator(np.random.PCG64(3)))
    assert 1.5 < y.max() < -np.log10(0.005)


def test_generation_is_byte_for_byte_reproducible(tmp_path: Path) -> None:
    first = _csv_only(tmp_path / "a")
    second = _csv_only(tmp_path / "b")
    assert [p.relative_to(tmp_path / "a") for p in first] == [p.relative_to(tmp_path / "b") for p in second]
    for p, q in zip(first, second):
        assert p.read_bytes() == q.read_bytes(), p.name


def test_committed_csv_files_are_what_the_generator_writes(tmp_path: Path) -> None:
    for p in _csv_only(tmp_path):
        rel = p.relative_to(tmp_path)
        committed = DEMO_DIR / rel
        assert committed.is_file(), f"{rel} is not committed: run python -m demo_data.generate"
        assert committed.read_bytes() == p.read_bytes(), f"{rel} differs from the generator's output"


def test_every_spectrum_file_says_it_is_synthetic() -> None:
    files = sorted(DEMO_DIR.glob("**/*.jdx")) + sorted(DEMO_DIR.glob("csv/**/*.csv"))
    assert len(files) >= 2 * 23
    for f in files:
        head = f.read_text(encoding="utf-8")[:2000]
        if f.suffix == ".jdx":
            title = next(line for line in head.splitlines() if line.upper().startswith("##TITLE="))
            assert "SYNTHETIC DEMO DATA" in title, f
            assert any(line.startswith("$$") and "SYNTHETIC DEMO DATA" in line for line in head.splitlines()), f
        else:
            assert "synthetic_demo_data" in head.splitlines()[0], f
    assert "synthetic demo data" in (DEMO_DIR / "README.md").read_text(encoding="utf-8").lower()


def test_manifest_names_existing_files_and_every_path_of_the_workflow() -> None:
    doc = json.loads((DEMO_DIR / "scenario.json").read_text(encoding="utf-8"))
    assert doc == json.loads(json.dumps(generate.manifest()))  # committed manifest is current
    assert {lot["key"] for lot in doc["lots"]} >= {
        "clean-pass", "wet", "mix-up", "contaminated", "invalid", "instrument-lapsed", "rejected", "released"}
    supplied = {(s["code"], m) for s in doc["suppliers"] for m in s["materials"]}
    for lot in doc["lots"]:
        assert (lot["supplier"], lot["material"]) in supplied, lot["key"]
        for m in lot["measurements"]:
            assert (DEMO_DIR / m["file"]).is_file(), m["file"]
            assert 1 <= m["container"] <= lot["containers"]
    for m in doc["materials"]:
        assert (DEMO_DIR / m["specification"]).is_file() and (DEMO_DIR / m["reference"]).is_file()
    assert 5 <= len(doc["materials"]) <= 8


def test_invented_names_are_labelled_invented() -> None:
    assert "(invented)" in scenario.COMPANY
    assert all("(invented)" in s.name for s in scenario.SUPPLIERS)


@pytest.mark.parametrize("material", materials.MATERIALS, ids=lambda m: m.code)
def test_spec_windows_follow_group_frequency_tables(material: materials.DemoMaterial) -> None:
    # Group-frequency tables (UCLA WebSpectra / UMass OWL, as quoted in the domain notes): each
    # required window holds one of the material's own bands; no forbidden window holds one.
    spec = material.specification()
    positions = [b.position for b in material.bands if b.height >= 0.05]
    for rule in spec["required_bands"]:
        lo, hi = sorted((rule["from"], rule["to"]))
        assert any(lo <= p <= hi for p in positions), rule["label"]
    for rule in spec["forbidden_bands"]:
        lo, hi = sorted((rule["from"], rule["to"]))
        assert not any(lo <= p <= hi for p in positions), rule["label"]


def test_polystyrene_film_meets_the_resolution_and_position_checks() -> None:
    # Ph. Eur. 2.2.24 (positions and FT resolution limits as quoted in the domain notes, from memory):
    # A(2849.5) - A(2870) > 0.33; A(1583) - A(1589) > 0.08; maxima within ±1.0 / ±1.5 cm-1.
    passing, shifted = generate.polystyrene()

    def a_at(g: generate.Generated, v: float) -> float:
        return float(np.interp(v, g.x, g.y))

    assert a_at(passing, 2849.5) - a_at(passing, 2870.0) > 0.33
    assert a_at(passing, 1583.0) - a_at(passing, 1589.0) > 0.08
    for target, tol in ((3060.0, 1.5), (2849.5, 1.5), (1942.9, 1.5), (1601.2, 1.0), (1583.0, 1.0),
                        (1154.5, 1.0), (1028.3, 1.0)):
        for g, should_pass in ((passing, True), (shifted, False)):
            m = (g.x > target - 4) & (g.x < target + 6)
            i = int(np.argmax(np.where(m, g.y, -np.inf)))
            y0, y1, y2 = g.y[i - 1], g.y[i], g.y[i + 1]
            peak = g.x[i] + 0.5 * (y0 - y2) / (y0 - 2 * y1 + y2)  # 3-point parabola (domain notes)
            assert bool(abs(peak - target) <= tol) is should_pass, (target, peak)
