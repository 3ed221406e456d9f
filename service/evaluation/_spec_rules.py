"""The rules a specification document must follow; every broken rule becomes one FieldProblem."""

from __future__ import annotations

import math
import re
from typing import Any

from service.errors import FieldProblem
from service.evaluation.preparations import PREPARATIONS, SOLVENTS
from service.evaluation.specification import (
    BASELINES,
    METRICS,
    WAVENUMBER_MAX,
    WAVENUMBER_MIN,
    BandRule,
    Fingerprint,
    ForbiddenBand,
    QualityRule,
    Specification,
)

TOP_KEYS = ("material", "name", "version", "preparation", "range", "exclude", "required_bands",
            "forbidden_bands", "fingerprint", "quality", "preprocessing")
REQUIRED_BAND_KEYS = ("label", "from", "to", "min_relative_intensity", "max_relative_intensity", "min_width",
                      "max_width", "position", "tolerance")
FORBIDDEN_BAND_KEYS = ("label", "from", "to", "max_relative_intensity")
FINGERPRINT_KEYS = ("metric", "regions", "min_score", "max_distance")
QUALITY_KEYS = ("max_absorbance", "min_absorbance")
PREPROCESSING_KEYS = ("baseline",)
MATERIAL_CODE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$")
MIN_SPAN_CM1 = 50.0


class _Checker:
    def __init__(self, problems: list[FieldProblem]) -> None:
        self.problems = problems

    def bad(self, path: str, message: str) -> None:
        self.problems.append(FieldProblem(path=path, message=message))

    def keys(self, obj: dict[str, Any], allowed: tuple[str, ...], path: str) -> None:
        for key in obj:
            if key not in allowed:
                self.bad(f"{path}{'.' if path else ''}{key}",
                         f"unknown key; remove it (allowed here: {', '.join(allowed)})")

    def number(self, value: Any, path: str, lo: float, hi: float, *, what: str = "a number",
               lo_open: bool = False) -> float | None:
        ok = isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
        if ok and (value > lo or (not lo_open and value == lo)) and value <= hi:
            return float(value)
        low = f"above {lo:g}" if lo_open else f"between {lo:g}"
        rng = f"{low} and at most {hi:g}" if lo_open else f"{low} and {hi:g}"
        self.bad(path, f"must be {what} {rng}" + ("" if value is None else f" (got {value!r})"))
        return None

    def wavenumber(self, value: Any, path: str) -> float | None:
        return self.number(value, path, WAVENUMBER_MIN, WAVENUMBER_MAX, what="a wavenumber in cm⁻¹")

    def text(self, value: Any, path: str, *, max_len: int = 200) -> str | None:
        if isinstance(value, str) and value.strip() and len(value) <= max_len:
            return value.strip()
        self.bad(path, f"must be a non-empty text of at most {max_len} characters")
        return None

    def pair(self, value: Any, path: str) -> tuple[float, float] | None:
        if not (isinstance(value, list) and len(value) == 2):
            self.bad(path, "must be a pair of wavenumbers [from, to] in cm⁻¹, e.g. [2400, 2280]")
            return None
        a, b = self.wavenumber(value[0], f"{path}[0]"), self.wavenumber(value[1], f"{path}[1]")
        if a is None or b is None:
            return None
        if a == b:
            self.bad(path, "the two ends are equal; give an interval, e.g. [2400, 2280]")
            return None
        return a, b

    def inside(self, window: tuple[float, float], rng: tuple[float, float] | None, path: str) -> None:
        if rng is None:
            return
        lo, hi = min(window), max(window)
        if lo < rng[0] or hi > rng[1]:
            self.bad(path, f"the window {hi:g}–{lo:g} cm⁻¹ lies outside the evaluated range "
                           f"{rng[1]:g}–{rng[0]:g}; move it inside or widen `range`")


def check_document(doc: Any, problems: list[FieldProblem]) -> Specification | None:
    c = _Checker(problems)
    if not isinstance(doc, dict):
        c.bad("", "the specification must be a JSON object")
        return None
    c.keys(doc, TOP_KEYS, "")
    for key in ("material", "name", "version", "preparation", "range"):
        if key not in doc:
            c.bad(key, "is required")

    material = None
    if "material" in doc:
        value = doc["material"]
        material = value if isinstance(value, str) and MATERIAL_CODE.match(value) else None
        if material is None:
            c.bad("material", "must be a material code of 1–64 letters, digits, '.', '_' or '-' (e.g. EXC-104)")
    name = c.text(doc["name"], "name") if "name" in doc else None
    version = doc.get("version")
    if "version" in doc and not (isinstance(version, int) and not isinstance(version, bool) and version >= 1):
        c.bad("version", "must be a whole number from 1 (increase it with every change)")
        version = None

    prep, solvent = _preparation(c, doc.get("preparation")) if "preparation" in doc else (None, None)

    rng: tuple[float, float] | None = None
    rng_given: tuple[float, float] | None = None
    if "range" in doc:
        rng_given = c.pair(doc["range"], "range")
        if rng_given is not None:
            rng = (min(rng_given), max(rng_given))
            if rng[1] - rng[0] < MIN_SPAN_CM1:
                c.bad("range", f"spans less than {MIN_SPAN_CM1:g} cm⁻¹; widen it")
            if prep is not None and rng[0] < PREPARATIONS[prep].usable_lo:
                c.bad("range", f"{prep} is usable down to {PREPARATIONS[prep].usable_lo:g} cm⁻¹ only; "
                               f"end the range at {PREPARATIONS[prep].usable_lo:g} or above")

    exclude: list[tuple[float, float]] = []
    for i, item in enumerate(_list(c, doc, "exclude")):
        p = c.pair(item, f"exclude[{i}]")
        if p is not None:
            c.inside(p, rng, f"exclude[{i}]")
            exclude.append(p)

    required = [r for i, item in enumerate(_list(c, doc, "required_bands"))
                if (r := _required_band(c, item, f"required_bands[{i}]", rng)) is not None]
    forbidden = [r for i, item in enumerate(_list(c, doc, "forbidden_bands"))
                 if (r := _forbidden_band(c, item, f"forbidden_bands[{i}]", rng)) is not None]
    _check_overlaps(c, doc, required, forbidden)

    fingerprint = _fingerprint(c, doc["fingerprint"], rng) if "fingerprint" in doc else None
    quality = _quality(c, doc["quality"]) if "quality" in doc else QualityRule()
    baseline = _preprocessing(c, doc["preprocessing"]) if "preprocessing" in doc else "asls"
    if "fingerprint" not in doc and not doc.get("required_bands"):
        c.bad("fingerprint", "a specification needs a fingerprint or at least one required band to judge identity")

    if problems or None in (material, name, version, prep, rng_given, quality, baseline):
        return None
    spec = Specification(
        material=material, name=name, version=version, preparation=prep, solvent=solvent,  # type: ignore[arg-type]
        range=rng_given, exclude=tuple(exclude), required_bands=tuple(required),  # type: ignore[arg-type]
        forbidden_bands=tuple(forbidden), fingerprint=fingerprint, quality=quality,  # type: ignore[arg-type]
        baseline=baseline,  # type: ignore[arg-type]
    )
    _check_against_exclusions(c, spec)
    return None if problems else spec


def _list(c: _Checker, doc: dict[str, Any], key: str) -> list[Any]:
    value = doc.get(key, [])
    if not isinstance(value, list):
        c.bad(key, "must be a list (use [] for none)")
        return []
    return value


def _preparation(c: _Checker, value: Any) -> tuple[str | None, str | None]:
    known = ", ".join(PREPARATIONS)
    solvent = None
    if isinstance(value, dict):
        c.keys(value, ("method", "solvent"), "preparation")
        method, solvent = value.get("method"), value.get("solvent")
    else:
        method = value
    if method not in PREPARATIONS:
        c.bad("preparation" if not isinstance(value, dict) else "preparation.method",
              f"must be one of {known}")
        return None, None
    if PREPARATIONS[method].needs_solvent:
        if solvent not in SOLVENTS:
            c.bad("preparation.solvent", "a solution needs its solvent: write the preparation as "
                  f'{{"method": "solution", "solvent": ...}} with one of {", ".join(SOLVENTS)}')
            return None, None
    elif solvent is not None:
        c.bad("preparation.solvent", f"only a solution has a solvent; remove it for {method}")
        return None, None
    return method, solvent


def _window(c: _Checker, item: dict[str, Any], path: str, rng: tuple[float, float] | None
            ) -> tuple[float, float] | None:
    a = c.wavenumber(item["from"], f"{path}.from") if "from" in item else None
    b = c.wavenumber(item["to"], f"{path}.to") if "to" in item else None
    for key in ("from", "to"):
        if key not in item:
            c.bad(f"{path}.{key}", "is required (a wavenumber in cm⁻¹)")
    if a is None or b is None:
        return None
    if a == b:
        c.bad(path, "`from` and `to` are equal; give a window at least a few cm⁻¹ wide")
        return None
    c.inside((a, b), rng, path)
    return a, b


def _fraction(c: _Checker, item: dict[str, Any], key: str, path: str) -> float | None:
    if key not in item:
        return None
    return c.number(item[key], f"{path}.{key}", 0.0, 1.0, what="a fraction of the strongest band",
                    lo_open=True)


def _required_band(c: _Checker, item: Any, path: str, rng: tuple[float, float] | None) -> BandRule | None:
    if not isinstance(item, dict):
        c.bad(path, 'must be an object such as {"label": ..., "from": 1750, "to": 1735}')
        return None
    c.keys(item, REQUIRED_BAND_KEYS, path)
    n0 = len(c.problems)
    label = c.text(item.get("label"), f"{path}.label")
    window = _window(c, item, path, rng)
    vals = {k: _fraction(c, item, k, path) for k in ("min_relative_intensity", "max_relative_intensity")}
    for k in ("min_width", "max_width", "tolerance"):
        vals[k] = (c.number(item[k], f"{path}.{k}", 0.0, 2000.0, what="a width in cm⁻¹", lo_open=True)
                   if k in item else None)
    vals["position"] = c.wavenumber(item["position"], f"{path}.position") if "position" in item else None
    if (vals["min_relative_intensity"] or 0) > (vals["max_relative_intensity"] or 1):
        c.bad(f"{path}.min_relative_intensity", "is above max_relative_intensity; swap or correct them")
    if vals["min_width"] is not None and vals["max_width"] is not None and vals["min_width"] > vals["max_width"]:
        c.bad(f"{path}.min_width", "is above max_width; swap or correct them")
    if ("position" in item) != ("tolerance" in item):
        c.bad(f"{path}.tolerance" if "position" in item else f"{path}.position",
              "`position` and `tolerance` go together (a band expected at 1601.2 ± 1.0); give both or neither")
    if window is not None and vals["position"] is not None and not min(window) <= vals["position"] <= max(window):
        c.bad(f"{path}.position", f"lies outside the band's own window {max(window):g}–{min(window):g}")
    if len(c.problems) > n0 or label is None or window is None:
        return None
    return BandRule(label=label, start=window[0], end=window[1], **vals)


def _forbidden_band(c: _Checker, item: Any, path: str, rng: tuple[float, float] | None) -> ForbiddenBand | None:
    if not isinstance(item, dict):
        c.bad(path, 'must be an object such as '
                    '{"label": ..., "from": 1760, "to": 1690, "max_relative_intensity": 0.05}')
        return None
    c.keys(item, FORBIDDEN_BAND_KEYS, path)
    n0 = len(c.problems)
    label = c.text(item.get("label"), f"{path}.label")
    window = _window(c, item, path, rng)
    limit = _fraction(c, item, "max_relative_intensity", path)
    if "max_relative_intensity" not in item:
        c.bad(f"{path}.max_relative_intensity", "is required: the largest relative intensity tolerated (e.g. 0.05)")
    if len(c.problems) > n0 or label is None or window is None or limit is None:
        return None
    return ForbiddenBand(label=label, start=window[0], end=window[1], max_relative_intensity=limit)


def _check_overlaps(c: _Checker, doc: dict[str, Any], required: list[BandRule], forbidden: list[ForbiddenBand]) -> None:
    for j, f in enumerate(forbidden):
        for i, r in enumerate(required):
            if r.window[0] < f.window[1] and f.window[0] < r.window[1]:
                c.bad(f"forbidden_bands[{j}]",
                      f"its window {f.window[1]:g}–{f.window[0]:g} overlaps required_bands[{i}] "
                      f"({r.window[1]:g}–{r.window[0]:g}); a region cannot both require and forbid a band: narrow one")


def _fingerprint(c: _Checker, value: Any, rng: tuple[float, float] | None) -> Fingerprint | None:
    if not isinstance(value, dict):
        c.bad("fingerprint", 'must be an object such as {"metric": "pearson", "min_score": 0.95}')
        return None
    c.keys(value, FINGERPRINT_KEYS, "fingerprint")
    n0 = len(c.problems)
    metric = value.get("metric")
    if metric not in METRICS:
        c.bad("fingerprint.metric", f"must be one of {', '.join(METRICS)}")
    regions = None
    if "regions" in value:
        if not isinstance(value["regions"], list) or not value["regions"]:
            c.bad("fingerprint.regions", "must be a non-empty list of [from, to] pairs (or leave it out)")
        else:
            regions = []
            for i, item in enumerate(value["regions"]):
                p = c.pair(item, f"fingerprint.regions[{i}]")
                if p is not None:
                    c.inside(p, rng, f"fingerprint.regions[{i}]")
                    regions.append(p)
    min_score = max_distance = None
    if metric == "euclidean":
        if "min_score" in value:
            c.bad("fingerprint.min_score", "applies to pearson and first-derivative; for euclidean give max_distance")
        if "max_distance" not in value:
            c.bad("fingerprint.max_distance", "is required for euclidean (distance of vector-normalised spectra, 0–2)")
        else:
            max_distance = c.number(value["max_distance"], "fingerprint.max_distance", 0.0, 2.0, lo_open=True)
    elif metric in METRICS:
        if "max_distance" in value:
            c.bad("fingerprint.max_distance", "applies to euclidean only; for correlations give min_score")
        if "min_score" not in value:
            c.bad("fingerprint.min_score", "is required: the lowest correlation accepted (e.g. 0.95)")
        else:
            min_score = c.number(value["min_score"], "fingerprint.min_score", 0.0, 1.0, lo_open=True,
                                 what="a correlation")
    if len(c.problems) > n0:
        return None
    return Fingerprint(metric=metric, regions=tuple(regions) if regions is not None else None,
                       min_score=min_score, max_distance=max_distance)


def _quality(c: _Checker, value: Any) -> QualityRule | None:
    if not isinstance(value, dict):
        c.bad("quality", 'must be an object such as {"max_absorbance": 1.5, "min_absorbance": 0.1}')
        return None
    c.keys(value, QUALITY_KEYS, "quality")
    n0 = len(c.problems)
    hi = c.number(value.get("max_absorbance", 1.5), "quality.max_absorbance", 0.0, 4.0, lo_open=True,
                  what="an absorbance")
    lo = c.number(value.get("min_absorbance", 0.1), "quality.min_absorbance", 0.0, 4.0, what="an absorbance")
    if hi is not None and lo is not None and lo >= hi:
        c.bad("quality.min_absorbance", "must be below max_absorbance")
    return None if len(c.problems) > n0 else QualityRule(max_absorbance=hi, min_absorbance=lo)  # type: ignore[arg-type]


def _preprocessing(c: _Checker, value: Any) -> str | None:
    if not isinstance(value, dict):
        c.bad("preprocessing", 'must be an object such as {"baseline": "asls"}')
        return None
    c.keys(value, PREPROCESSING_KEYS, "preprocessing")
    baseline = value.get("baseline", "asls")
    if baseline not in BASELINES:
        c.bad("preprocessing.baseline", f"must be one of {', '.join(BASELINES)}")
        return None
    return baseline  # type: ignore[no-any-return]


def _check_against_exclusions(c: _Checker, spec: Specification) -> None:
    """A window lying wholly inside an excluded region cannot be measured."""
    regions = spec.excluded_regions()
    for kind, rules in (("required_bands", spec.required_bands), ("forbidden_bands", spec.forbidden_bands)):
        for i, rule in enumerate(rules):
            for r in regions:
                if r.covers(*rule.window):
                    c.bad(f"{kind}[{i}]", f"its window lies inside the excluded region {r.hi:g}–{r.lo:g} "
                          f"({r.reason}); it cannot be measured there: move it or change the preparation")
