"""Worked example: derive a fingerprint limit from authentic lots, then challenge it.

Run ``python -m demo_data.threshold_example [MATERIAL_CODE]`` (default EXC-101). It simulates
twenty authentic lots of the material (synthetic, seeded: different contact pressure, baseline and
noise per lot), scores the first twelve against the approved reference with the specification's own
metric, sets the limit at mean − 3·sd of those scores (common practice; see the domain notes on match
limits), confirms it on the eight held-out authentic lots, and shows how the near-neighbour materials of
the demo library score. Everything printed is synthetic demo data.
"""

from __future__ import annotations

import argparse
import statistics
import sys

import numpy as np

from demo_data import generate, materials
from demo_data.synth import Acquisition, measure
from service.evaluation import evaluate, parse_specification
from service.spectra.model import Spectrum

AUTHENTIC_LOTS = 20
TRAINING_LOTS = 12
K_SD = 3.0


def _score(sample: Spectrum, spec_doc: dict, reference: Spectrum) -> float:
    result = evaluate(sample, parse_specification(spec_doc), reference).as_dict()
    return float(next(c["measured"] for c in result["criteria"] if c["kind"] == "fingerprint"))


def _authentic_lot(material: materials.DemoMaterial, i: int) -> Spectrum:
    rng = np.random.Generator(np.random.PCG64(generate.seed_for(f"authentic/{material.code}/{i}")))
    acq = Acquisition(scale=float(rng.uniform(0.8, 1.2)), offset=float(rng.uniform(0.0, 0.03)),
                      slope=float(rng.uniform(0.0, 0.03)), noise_sd=float(rng.uniform(0.001, 0.003)))
    x = generate.grid()
    return Spectrum.create(x, measure(x, material.bands, acq, rng), "absorbance")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m demo_data.threshold_example", description=__doc__.splitlines()[0])
    parser.add_argument("material", nargs="?", default="EXC-101", help="material code (default EXC-101)")
    args = parser.parse_args(argv)
    material = materials.BY_CODE[args.material]
    refs = {g.relpath.split("/")[-1]: Spectrum.create(g.x, g.y, "absorbance") for g in generate.references()}
    spec_doc = material.specification()
    reference = refs[material.code]

    scores = [_score(_authentic_lot(material, i), spec_doc, reference) for i in range(AUTHENTIC_LOTS)]
    train, held_out = scores[:TRAINING_LOTS], scores[TRAINING_LOTS:]
    mean, sd = statistics.fmean(train), statistics.stdev(train)
    limit = mean - K_SD * sd
    print(f"SYNTHETIC DEMO DATA - {material.code} {material.name}, metric {spec_doc['fingerprint']['metric']}")
    print(f"authentic lots used to set the limit: {TRAINING_LOTS}; mean {mean:.4f}, sd {sd:.4f}")
    print(f"limit = mean - {K_SD:g} sd = {limit:.4f}   (the common default is {spec_doc['fingerprint']['min_score']})")
    passed = sum(s >= limit for s in held_out)
    print(f"held-out authentic lots at or above the limit: {passed} of {len(held_out)} "
          f"(lowest {min(held_out):.4f})")
    print("other materials of the library scored as if they were this one (must stay below the limit):")
    for code, other in refs.items():
        if code == material.code:
            continue
        s = _score(other, spec_doc, reference)
        print(f"  {code} {materials.BY_CODE[code].name:28s} {s:8.4f}  {'below' if s < limit else 'NOT below'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
