"""Read models for the pages, assembled from the use cases (never from the store directly).

Here the lot, measurement and evaluation records are put into the shape the templates need:
rows of criteria with measured value, limit and outcome; the plot of sample over reference; the
line that says whether anything changed after first entry.
"""

from __future__ import annotations

from collections import OrderedDict
from typing import Any

import numpy as np

from service.errors import BandgateError
from service.web import plots
from service.web.pages._base import Person

FINGERPRINT = plots.FINGERPRINT_CM1
_PLOT_CACHE: "OrderedDict[tuple[Any, ...], str]" = OrderedDict()
_PLOT_CACHE_SIZE = 64  # figures of immutable records (stored bytes + stored evaluation), so never stale


def actor(person: Person) -> Any:
    from service.release.actor import Actor

    return Actor(user_id=person.user_id, username=person.username, printed_name=person.printed_name,
                 roles=frozenset(person.roles))


def lot_summary(engine: Any, code: str) -> Any:
    from service.services import lots as lots_uc

    return lots_uc.get_lot(engine, code)


# --- evaluation records -------------------------------------------------------------------------

def _fmt(value: Any, unit: str = "") -> str:
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (int, float)):
        v = float(value)
        text = f"{v:.4f}" if abs(v) < 10 else f"{v:.1f}"
        text = text.rstrip("0").rstrip(".") if "." in text else text
        return f"{text} {unit}".strip() if unit and unit not in ("correlation", "distance", "fraction") else text
    return str(value)


COMPARISON_WORDS = {">=": "at least", "<=": "at most", ">": "more than", "<": "less than", "==": "equal to"}


def criterion_rows(doc: dict[str, Any]) -> list[dict[str, Any]]:
    """One row per criterion (and per sub-check), with the limit written in words."""
    rows = []
    for c in doc.get("criteria", []) or []:
        unit = c.get("unit") or ""
        limit = c.get("limit")
        comparison = c.get("comparison")
        limit_text = (f"{COMPARISON_WORDS.get(comparison, comparison or '')} {_fmt(limit, unit)}".strip()
                      if limit is not None else "—")
        details = c.get("details") or {}
        band = details.get("band") or {}
        window = details.get("window_cm1")
        rows.append({
            "kind": (c.get("kind") or "").replace("_", " "),
            "label": c.get("label") or "",
            "measured": _fmt(c.get("measured"), unit),
            "limit": limit_text,
            "outcome": c.get("outcome"),
            "message": c.get("message") or "",
            "window": f"{_fmt(max(window))}–{_fmt(min(window))} cm⁻¹" if window else "",
            "band_at": band.get("position_cm1"),
            "checks": [
                {"name": ch.get("name", ""), "measured": _fmt(ch.get("measured")),
                 "limit": f"{COMPARISON_WORDS.get(ch.get('comparison'), ch.get('comparison') or '')} {_fmt(ch.get('limit'))}",
                 "outcome": ch.get("outcome")}
                for ch in details.get("checks", []) or [] if isinstance(ch, dict)
            ],
        })
    return rows


def _windows(doc: dict[str, Any]) -> tuple[tuple[plots.Region, ...], ...]:
    spec = (doc.get("specification") or {}).get("document") or {}
    req = tuple(plots.Region(low=min(b["from"], b["to"]), high=max(b["from"], b["to"]), label=b.get("label", ""))
                for b in spec.get("required_bands", []) or [])
    forb = tuple(plots.Region(low=min(b["from"], b["to"]), high=max(b["from"], b["to"]), label=b.get("label", ""))
                 for b in spec.get("forbidden_bands", []) or [])
    exc = []
    for r in doc.get("excluded_regions", []) or []:
        lo = r.get("lo", r.get("low", r.get("from")))
        hi = r.get("hi", r.get("high", r.get("to")))
        if lo is not None and hi is not None:
            exc.append(plots.Region(low=min(lo, hi), high=max(lo, hi), label=r.get("reason", "")))
    return req, forb, tuple(exc)


def _absorbance(data: bytes, file_name: str) -> Any:
    from service.evaluation.method import as_absorbance
    from service.services import evaluator

    return as_absorbance(evaluator.read_spectrum(data, file_name=file_name))


def spectrum_plot(*, sample: Any, sample_label: str, reference: Any | None, reference_label: str,
                  doc: dict[str, Any] | None, show_difference: bool, title: str = "") -> str:
    """The evaluation figure: sample over reference (scaled to the sample's strongest band)."""
    required, forbidden, excluded = _windows(doc or {})
    bands = tuple(plots.BandMark(position_cm1=float(r["band_at"])) for r in criterion_rows(doc or {})
                  if r.get("band_at") is not None)
    spec_range = ((doc or {}).get("specification") or {}).get("document", {}).get("range")
    window = (float(min(spec_range)), float(max(spec_range))) if spec_range else None
    ref_trace = None
    if reference is not None:
        ry = np.asarray(reference.y, dtype=float)
        sy = np.asarray(sample.y, dtype=float)
        lo, hi = window or (-np.inf, np.inf)
        s_in = sy[(sample.x >= lo) & (sample.x <= hi)]
        r_in = ry[(reference.x >= lo) & (reference.x <= hi)]
        s_max = float(np.nanmax(s_in)) if s_in.size else float(np.nanmax(sy))
        r_max = float(np.nanmax(r_in)) if r_in.size else float(np.nanmax(ry))
        scale = (s_max / r_max) if r_max > 0 and s_max > 0 else 1.0
        ref_trace = plots.Trace(x=reference.x, y=ry * scale, label=reference_label +
                                (f" (×{scale:.2f} to the sample's strongest band)" if abs(scale - 1) > 0.005 else ""))
    return plots.render_svg(plots.SpectrumPlot(
        sample=plots.Trace(x=sample.x, y=sample.y, label=sample_label), reference=ref_trace,
        required=required, forbidden=forbidden, excluded=excluded, bands=bands,
        show_difference=show_difference and ref_trace is not None, title=title, window=window))


def measurement_context(engine: Any, measurement_id: int, *, show_difference: bool = True) -> dict[str, Any]:
    from service.services import lots as lots_uc
    from service.services import measurements as meas_uc
    from service.services import specifications as spec_uc

    m, data = meas_uc.measurement_file(engine, measurement_id)
    lot = lots_uc.get_lot(engine, m.lot_code)
    ctx: dict[str, Any] = {"meas": m, "lot": lot, "doc": None, "rows": [], "plot": None, "plot_error": "",
                           "reference": None, "spec": None, "show_difference": show_difference}
    ev = m.evaluation
    if ev is None:
        return ctx
    doc = ev.document
    ctx.update(doc=doc, rows=criterion_rows(doc), warnings=doc.get("warnings") or [],
               invalid_reasons=doc.get("invalid_reasons") or [], matches=doc.get("matches"))
    try:
        ctx["spec"] = spec_uc.get_spec_version(engine, ev.spec_version_id)
    except BandgateError:
        ctx["spec"] = None
    key = (str(engine.url), m.id, m.sha256, ev.id, ev.reference_id, show_difference)
    try:
        ref_view, ref_bytes = spec_uc.reference_file(engine, ev.reference_id)
        ctx["reference"] = ref_view
        if key in _PLOT_CACHE:
            _PLOT_CACHE.move_to_end(key)
            ctx["plot"] = _PLOT_CACHE[key]
            return ctx
        sample = _absorbance(data, m.file_name)
        reference = _absorbance(ref_bytes, ref_view.file_name)
        ctx["plot"] = spectrum_plot(
            sample=sample, sample_label=f"sample, container {m.container} (measurement {m.id})",
            reference=reference, reference_label=f"reference {ref_view.id} ({ref_view.preparation})",
            doc=doc, show_difference=show_difference)
        _PLOT_CACHE[key] = ctx["plot"]
        if len(_PLOT_CACHE) > _PLOT_CACHE_SIZE:
            _PLOT_CACHE.popitem(last=False)
    except (BandgateError, plots.PlotError, ValueError) as exc:
        ctx["plot_error"] = f"the plot cannot be drawn: {getattr(exc, 'message', exc)}"
    return ctx


# --- lots ---------------------------------------------------------------------------------------

def _changes_line(lot: Any, *, changed_in_trail: bool = False) -> dict[str, Any]:
    """Annex 11 §8.2: does the printout show that data changed after first entry?

    Records are append-only: a measurement is never edited; what can happen after entry is that a
    measurement is set aside (invalidated, with its cause) and a retest added. Those are listed;
    the audit trail's own verdict (any change or invalidation event on the lot's records) counts too.
    """
    invalidated = [m for m in lot.measurements if m.invalidated]
    if not invalidated and not changed_in_trail:
        return {"changed": False, "text": "No recorded data of this lot was changed or set aside after first entry."}
    items = "; ".join(f"measurement {m.id} (container {m.container}) invalidated: {m.invalidation_cause}"
                      for m in invalidated)
    if not items:
        return {"changed": True, "text": "Data of this lot was changed after first entry; the audit trail of this "
                                         "lot shows each change with its old and new values and reason."}
    return {"changed": True, "text": f"Data set aside after first entry (originals kept and shown): {items}."}


def _changed_in_trail(engine: Any, code: str) -> bool:
    from service.services import audit_trail

    return bool(audit_trail.lot_record(engine, code).get("changed_after_first_entry"))


def lot_context(engine: Any, code: str, *, person: Person, with_plots: bool = False) -> dict[str, Any]:
    from service.services import lots as lots_uc

    lot = lots_uc.get_lot(engine, code)
    by_container: dict[int, list[Any]] = {}
    for m in lot.measurements:
        by_container.setdefault(m.container, []).append(m)
    failing = [m for m in lot.measurements if m.verdict == "fail" and not m.invalidated]
    evidence = []
    if with_plots:
        for m in failing:
            ctx = measurement_context(engine, m.id, show_difference=True)
            evidence.append(ctx)
    may = person.may
    return {
        "lot": lot, "plan": lot.plan, "by_container": by_container, "failing": failing, "evidence": evidence,
        "changes": _changes_line(lot, changed_in_trail=_changed_in_trail(engine, code)),
        "can_upload": lot.state in ("quarantine", "testing") and "record_measurement" in may,
        "can_review": lot.state == "awaiting_review" and "sign_review" in may,
        "can_dispose": lot.state == "awaiting_disposition" and "sign_disposition" in may,
    }
