"""Library search: the vectorised ranking agrees with a slow, obvious oracle."""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
import pytest

from service.evaluation import LibraryView, Method, ReferenceLibrary
from service.evaluation.method import prepare
from service.spectra import Spectrum, cosine, pearson


def _oracle_pearson(a: list[float], b: list[float]) -> float:
    """Pearson r written out from its definition, one number at a time."""
    n = len(a)
    ma, mb = sum(a) / n, sum(b) / n
    num = sum((p - ma) * (q - mb) for p, q in zip(a, b))
    den = math.sqrt(sum((p - ma) ** 2 for p in a) * sum((q - mb) ** 2 for q in b))
    return num / den


def test_pearson_and_cosine_check_values() -> None:
    # ../shared/domain.md (Correlation): [1,2,3,4] vs [2,4,6,8.5]: r = 0.99838, cosine = 0.99955.
    from service.evaluation._kernels import centred_unit, unit

    a, b = np.array([1.0, 2, 3, 4]), np.array([2.0, 4, 6, 8.5])
    assert float(centred_unit(a) @ centred_unit(b)) == pytest.approx(0.99838, abs=5e-6)
    assert float(unit(a) @ unit(b)) == pytest.approx(0.99955, abs=5e-6)
    assert pearson(a, b) == pytest.approx(0.99838, abs=5e-6) and cosine(a, b) == pytest.approx(0.99955, abs=5e-6)


def _random_rows(n: int, m: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return rng.normal(size=(n, m)).cumsum(axis=1)  # smooth-ish, like spectra


@pytest.mark.parametrize("metric", ["pearson", "first-derivative", "euclidean"])
def test_vectorised_ranking_matches_the_oracle(metric: str) -> None:
    method = Method(lo=1000.0, hi=1199.0, metric=metric)
    rows = _random_rows(50, method.compared.size, 1)
    original = rows.copy()
    view = LibraryView.from_vectors([f"M{i}" for i in range(50)], rows.copy(), method)
    query = rows[17] + np.random.default_rng(2).normal(0, 0.5, rows.shape[1])
    qc = query - query.mean()
    qc = qc / np.linalg.norm(qc)
    got = view.rank(qc if metric != "euclidean" else query / np.linalg.norm(query), top=5)
    if metric == "euclidean":
        units = [r / np.linalg.norm(r) for r in original]
        q = query / np.linalg.norm(query)
        oracle = sorted(((float(np.sqrt(((u - q) ** 2).sum())), i) for i, u in enumerate(units)))
    else:
        oracle = sorted(((-_oracle_pearson(list(r), list(qc)), i) for i, r in enumerate(original)))
    assert [m.material for m in got] == [f"M{i}" for _, i in oracle[:5]]
    for m, (s, _) in zip(got, oracle):
        assert m.score == pytest.approx(abs(s), abs=1e-5)
    assert got[0].material == "M17"


def test_top_k_edge_cases() -> None:
    method = Method(lo=1000.0, hi=1099.0)
    view = LibraryView.from_vectors(["A", "B", "C"], _random_rows(3, method.compared.size, 3), method)
    q = _random_rows(1, method.compared.size, 4)[0]
    assert len(view.rank(q, top=10)) == 3
    assert view.rank(q, top=0) == []
    assert [m.rank for m in view.rank(q, top=3)] == [1, 2, 3]
    assert view.matrix.dtype == np.float32 and not view.matrix.flags.writeable
    with pytest.raises(ValueError):
        LibraryView.from_vectors(["A"], _random_rows(2, method.compared.size, 5), method)


def test_a_library_is_built_once_and_reused(make_spectrum: Callable[..., Spectrum]) -> None:
    refs = [(f"MAT-{i}", make_spectrum([(1000.0 + 150 * i, 0.5, 15.0), (2900.0, 0.3, 30.0)], seed=i))
            for i in range(6)]
    method = Method(lo=650.0, hi=3800.0, metric="pearson")
    lib = ReferenceLibrary.build(refs, method=method)
    assert lib.view(method) is lib.view(method)
    query = make_spectrum([(1450.0, 0.5, 15.0), (2900.0, 0.3, 30.0)], seed=99)
    matches = lib.search(query, top=3)
    assert matches[0].material == "MAT-3"
    direct = [float(prepare(s, method).vector @ prepare(query, method).vector) for _, s in refs]
    assert matches[0].score == pytest.approx(max(direct), abs=1e-5)


def test_references_not_covering_the_range_are_skipped_and_named(make_spectrum: Callable[..., Spectrum]) -> None:
    method = Method(lo=650.0, hi=3800.0)
    short = make_spectrum([(1000.0, 0.5, 15.0)], lo=1000.0, hi=3000.0)
    lib = ReferenceLibrary.build([("FULL", make_spectrum([(1000.0, 0.5, 15.0)])), ("SHORT", short)])
    view = lib.view(method)
    assert view.codes == ("FULL",) and view.skipped == ("SHORT",)


def _specificity_oracle(view: LibraryView, vector: np.ndarray, material: str, top: int):  # type: ignore[no-untyped-def]
    """The whole library ranked as Match objects, the first of another material picked from the list."""
    ranked = view.rank(vector, top=len(view))
    others = [m for m in ranked if m.material != material]
    return (others[0] if others else None), tuple(ranked[:top])


@pytest.mark.parametrize("metric", ["pearson", "first-derivative", "euclidean"])
@pytest.mark.parametrize("top", [0, 1, 5, 50, -1])
def test_specificity_ranks_as_the_full_list_of_matches_does(metric: str, top: int) -> None:
    from evaluation_factories import ESTER_BANDS, synthetic

    from service.evaluation import parse_specification
    from service.evaluation.evaluate import _specificity

    spec = parse_specification({"material": "ESTER", "name": "synthetic ester", "version": 1,
                                "preparation": "atr-znse", "range": [3800, 650],
                                "fingerprint": {"metric": metric, "min_score": 0.9} if metric != "euclidean"
                                else {"metric": metric, "max_distance": 0.5}})
    method = Method.for_specification(spec)
    ester, other = synthetic(ESTER_BANDS, seed=1), synthetic(ESTER_BANDS[:-3] + [(1100.0, 0.5, 30.0)], seed=2)
    entries = [("OTHER", other), ("ESTER", ester), ("TWIN", ester), ("OTHER", other), ("ESTER", ester)]  # ties
    for library in (ReferenceLibrary.build(entries), ReferenceLibrary.build([("ESTER", ester)]),
                    ReferenceLibrary.build([])):
        view = library.view(method)
        sample = prepare(synthetic(ESTER_BANDS, seed=3), method)
        crit, matches = _specificity(sample, 0.97, spec, library, method, top)
        best, want = _specificity_oracle(view, sample.vector, "ESTER", top)
        assert matches == want
        assert crit.details["closest_other_material"] == (best.material if best else None)
        assert crit.details["closest_other_score"] == (best.score if best else None)
