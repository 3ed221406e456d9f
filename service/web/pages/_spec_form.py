"""The specification editor's form: rows of band rules in, a specification document out.

The document is validated by the evaluator's own parser (through the records use case); this
module only turns form fields into the document's shape and maps each problem's path
(``required_bands[2].from``) back to the field it came from (``rb2_from``).
"""

from __future__ import annotations

import re
from typing import Any

from service.errors import BandgateError

BLANK_BAND_ROWS = 3
BLANK_FORBIDDEN_ROWS = 2
BAND_KEYS = {"label": "label", "from": "from", "to": "to", "min_rel": "min_relative_intensity",
             "position": "position", "tolerance": "tolerance"}
FORBIDDEN_KEYS = {"label": "label", "from": "from", "to": "to", "max_rel": "max_relative_intensity"}


class FormProblems(Exception):
    def __init__(self, errors: dict[str, str]) -> None:
        super().__init__("form problems")
        self.errors = errors


def _num_text(v: Any) -> str:
    if v is None:
        return ""
    return f"{v:g}" if isinstance(v, float) else str(v)


def values_from_document(doc: dict[str, Any]) -> dict[str, Any]:
    prep = doc.get("preparation", "")
    values: dict[str, Any] = {
        "name": doc.get("name", ""), "preparation": prep.get("method", "") if isinstance(prep, dict) else prep,
        "range_high": _num_text(max(doc["range"])) if doc.get("range") else "4000",
        "range_low": _num_text(min(doc["range"])) if doc.get("range") else "650",
        "exclude": "; ".join(f"{_num_text(max(a, b))}-{_num_text(min(a, b))}" for a, b in doc.get("exclude", [])),
    }
    fp = doc.get("fingerprint") or {}
    values.update(metric=fp.get("metric", "pearson"), min_score=_num_text(fp.get("min_score", 0.95 if not fp else None)),
                  max_distance=_num_text(fp.get("max_distance")))
    q = doc.get("quality") or {}
    values.update(max_abs=_num_text(q.get("max_absorbance", 1.5)), min_abs=_num_text(q.get("min_absorbance", 0.1)))
    bands = doc.get("required_bands", []) or []
    for i, b in enumerate(bands):
        for short, key in BAND_KEYS.items():
            values[f"rb{i}_{short}"] = _num_text(b.get(key))
    forb = doc.get("forbidden_bands", []) or []
    for i, b in enumerate(forb):
        for short, key in FORBIDDEN_KEYS.items():
            values[f"fb{i}_{short}"] = _num_text(b.get(key))
    values["band_rows"] = len(bands) + BLANK_BAND_ROWS
    values["forbidden_rows"] = len(forb) + BLANK_FORBIDDEN_ROWS
    return values


def values_from_form(form: dict[str, str]) -> dict[str, Any]:
    values: dict[str, Any] = {k: v for k, v in form.items() if k != "csrf_token"}
    for key, blank, cap in (("band_rows", BLANK_BAND_ROWS, 60), ("forbidden_rows", BLANK_FORBIDDEN_ROWS, 30)):
        try:
            values[key] = max(1, min(int(form.get(key, blank)), cap))
        except ValueError:
            values[key] = blank
    return values


def context(mat: Any, values: dict[str, Any], *, base: Any = None) -> dict[str, Any]:
    from service.evaluation import PREPARATIONS

    preps = [(code, getattr(p, "name", code)) for code, p in PREPARATIONS.items()]
    metrics = [("pearson", "Pearson correlation (at least the limit)"),
               ("first-derivative", "first-derivative correlation (at least the limit)"),
               ("euclidean", "Euclidean distance (at most the limit)")]
    return {"mat": mat, "values": values, "preparations": preps, "metrics": metrics, "base": base}


def _number(values: dict[str, Any], field: str, errors: dict[str, str], *, required: bool, what: str) -> float | None:
    raw = str(values.get(field, "")).strip().replace(",", ".")
    if not raw:
        if required:
            errors[field] = f"enter {what}"
        return None
    try:
        return float(raw)
    except ValueError:
        errors[field] = f"{what} must be a number, not {raw[:20]!r}"
        return None


def document_from_values(code: str, values: dict[str, Any]) -> tuple[dict[str, str], dict[str, Any]]:
    errors: dict[str, str] = {}
    doc: dict[str, Any] = {"material": code, "name": str(values.get("name", "")).strip(), "version": 1,
                           "preparation": str(values.get("preparation", "")).strip()}
    if not doc["name"]:
        errors["name"] = "enter the specification's name (e.g. the material's name and test)"
    if not doc["preparation"]:
        errors["preparation"] = "choose the preparation; sample and reference must be prepared the same way"
    hi = _number(values, "range_high", errors, required=True, what="the high end of the range (cm⁻¹)")
    lo = _number(values, "range_low", errors, required=True, what="the low end of the range (cm⁻¹)")
    if hi is not None and lo is not None:
        doc["range"] = [hi, lo]
    exclude = []
    for part in [p for p in re.split(r"[;\n]", str(values.get("exclude", ""))) if p.strip()]:
        m = re.fullmatch(r"\s*(\d+(?:\.\d+)?)\s*[-–]\s*(\d+(?:\.\d+)?)\s*", part)
        if not m:
            errors["exclude"] = f"write each excluded region as high-low, separated by ';' (problem: {part.strip()[:30]!r})"
            break
        exclude.append([float(m.group(1)), float(m.group(2))])
    doc["exclude"] = exclude
    bands = []
    for i in range(int(values.get("band_rows", 0))):
        row = {short: str(values.get(f"rb{i}_{short}", "")).strip() for short in BAND_KEYS}
        if not any(row.values()):
            continue
        band: dict[str, Any] = {"label": row["label"] or f"band {i + 1}"}
        for short in ("from", "to"):
            v = _number(values, f"rb{i}_{short}", errors, required=True, what=f"the window's '{short}' (cm⁻¹)")
            if v is not None:
                band[short] = v
        for short in ("min_rel", "position", "tolerance"):
            v = _number(values, f"rb{i}_{short}", errors, required=False, what=short.replace("_", " "))
            if v is not None:
                band[BAND_KEYS[short]] = v
        bands.append((i, band))
    forbidden = []
    for i in range(int(values.get("forbidden_rows", 0))):
        row = {short: str(values.get(f"fb{i}_{short}", "")).strip() for short in FORBIDDEN_KEYS}
        if not any(row.values()):
            continue
        band = {"label": row["label"] or f"forbidden {i + 1}"}
        for short, what in (("from", "the window's 'from' (cm⁻¹)"), ("to", "the window's 'to' (cm⁻¹)"),
                            ("max_rel", "the largest relative intensity allowed (0–1)")):
            v = _number(values, f"fb{i}_{short}", errors, required=True, what=what)
            if v is not None:
                band[FORBIDDEN_KEYS[short]] = v
        forbidden.append((i, band))
    doc["required_bands"] = [b for _, b in bands]
    doc["forbidden_bands"] = [b for _, b in forbidden]
    values["_band_index"] = [i for i, _ in bands]
    values["_forbidden_index"] = [i for i, _ in forbidden]
    metric = str(values.get("metric", "")).strip()
    if metric:
        fp: dict[str, Any] = {"metric": metric}
        key, field = ("max_distance", "max_distance") if metric == "euclidean" else ("min_score", "min_score")
        v = _number(values, field, errors, required=True, what="the fingerprint limit")
        if v is not None:
            fp[key] = v
        doc["fingerprint"] = fp
    q = {}
    for field, key in (("max_abs", "max_absorbance"), ("min_abs", "min_absorbance")):
        v = _number(values, field, errors, required=False, what=key.replace("_", " "))
        if v is not None:
            q[key] = v
    if q:
        doc["quality"] = q
    return errors, doc


_PATH = re.compile(r"^(required_bands|forbidden_bands)\[(\d+)\](?:\.(\w+))?")
_TOP = {"name": "name", "preparation": "preparation", "range": "range_high", "exclude": "exclude",
        "fingerprint": "metric", "quality": "max_abs", "material": "_form", "version": "_form"}


def map_errors(exc: BandgateError, values: dict[str, Any] | None = None) -> dict[str, str]:
    """Problem paths from the specification parser → the editor's field names."""
    out: dict[str, str] = {}
    values = values or {}
    for f in exc.fields:
        m = _PATH.match(f.path)
        if m:
            kind, idx, key = m.group(1), int(m.group(2)), m.group(3) or "label"
            rows = values.get("_band_index" if kind == "required_bands" else "_forbidden_index") or []
            row = rows[idx] if idx < len(rows) else idx
            table = BAND_KEYS if kind == "required_bands" else FORBIDDEN_KEYS
            short = next((s for s, k in table.items() if k == key), "label")
            name = f"{'rb' if kind == 'required_bands' else 'fb'}{row}_{short}"
        else:
            top = f.path.split(".")[0].split("[")[0]
            name = _TOP.get(top, "_form")
            if top == "fingerprint" and f.path.endswith(("min_score", "max_distance")):
                name = f.path.rsplit(".", 1)[-1]
        text = f"{f.path}: {f.message}" if name == "_form" else f.message
        out[name] = f"{out[name]}; {text}" if name in out else text
    if not out:
        out["_form"] = exc.message
    return out


def apply_suggestions(engine: Any, code: str, values: dict[str, Any]) -> None:
    """Fill the band rows from the approved reference's measured bands, with group-frequency hints."""
    from service.services.band_suggestions import suggest_from_reference

    lo = hi = None
    try:
        lo, hi = sorted((float(values["range_low"]), float(values["range_high"])))
    except (KeyError, ValueError):
        pass
    rows = suggest_from_reference(engine, code, lo=lo, hi=hi)
    for key in [k for k in values if k.startswith("rb")]:
        del values[key]
    for i, r in enumerate(rows):
        values[f"rb{i}_label"] = r["label"]
        values[f"rb{i}_from"] = _num_text(r["from"])
        values[f"rb{i}_to"] = _num_text(r["to"])
        values[f"rb{i}_min_rel"] = _num_text(r.get("min_relative_intensity"))
        values[f"rb{i}_hint"] = r.get("hint", "")
    values["band_rows"] = len(rows) + BLANK_BAND_ROWS
