"""The seam to the spectral core: reading uploads, parsing specifications, evaluating, checking instruments.

The use cases call these functions rather than importing the core directly, so the records layer
depends on the core's public API only, in one place. Parsed references and specifications are
cached by content digest (they are immutable once approved).
"""

from __future__ import annotations

import json
from collections import OrderedDict
from typing import Any

from service.errors import ServiceUnavailable
from service.release.digests import sha256_hex

_CACHE_SIZE = 64
_spectra: "OrderedDict[str, Any]" = OrderedDict()
_specs: "OrderedDict[str, Any]" = OrderedDict()


def _missing(what: str, exc: ImportError) -> ServiceUnavailable:
    return ServiceUnavailable(f"{what} is not available in this installation ({exc}); reinstall Bandgate")


def read_spectrum(data: bytes, *, file_name: str = "") -> Any:
    """Read an uploaded file into a Spectrum; raises the reader's UnusableInput with its message."""
    try:
        from service.spectra.readers import read_spectrum as _read
    except ImportError as exc:  # pragma: no cover - only in a broken installation
        raise _missing("the spectrum reader", exc) from None
    return _read(data, file_name=file_name)


def read_cached(data: bytes, *, file_name: str = "") -> Any:
    """read_spectrum for stored, immutable files (references), cached by SHA-256."""
    key = sha256_hex(data)
    if key in _spectra:
        _spectra.move_to_end(key)
        return _spectra[key]
    spectrum = read_spectrum(data, file_name=file_name)
    _spectra[key] = spectrum
    if len(_spectra) > _CACHE_SIZE:
        _spectra.popitem(last=False)
    return spectrum


def parse_specification(document: dict[str, Any]) -> Any:
    """Validate a specification document; raises the evaluator's InvalidInput naming every field."""
    try:
        from service.evaluation import parse_specification as _parse
    except ImportError as exc:  # pragma: no cover
        raise _missing("the evaluator", exc) from None
    key = sha256_hex(json.dumps(document, sort_keys=True, default=str))
    if key in _specs:
        return _specs[key]
    spec = _parse(document)
    _specs[key] = spec
    if len(_specs) > _CACHE_SIZE:
        _specs.popitem(last=False)
    return spec


def evaluate(*, sample: Any, spec: Any, reference: Any, library: Any = None) -> Any:
    """Run the evaluator; returns an object with ``.verdict`` and ``.as_dict()``."""
    try:
        from service.evaluation import evaluate as _evaluate
    except ImportError as exc:  # pragma: no cover
        raise _missing("the evaluator", exc) from None
    return _evaluate(sample, spec, reference, library)


def spec_preparation(spec: Any) -> str | None:
    """The preparation a specification asks for (to pick the matching reference), if it names one."""
    prep = getattr(spec, "preparation", None)
    if prep is None:
        return None
    return str(getattr(prep, "value", prep)) or None


def check_polystyrene(spectrum: Any) -> tuple[bool, dict[str, Any]]:
    """Run the polystyrene film check; returns (passed, JSON-safe result)."""
    try:
        from service.spectra.polystyrene import check_polystyrene as _check
    except ImportError as exc:  # pragma: no cover
        raise _missing("the polystyrene check", exc) from None
    result = _check(spectrum)
    items = []
    for item in getattr(result, "checks", ()):
        items.append({k: _plain(getattr(item, k, None)) for k in ("name", "measured", "limit", "outcome")})
    return bool(result.passed), {"passed": bool(result.passed), "checks": items}


def _plain(value: Any) -> Any:
    if value is None or isinstance(value, (str, int, bool)):
        return value
    if isinstance(value, float):
        return value if value == value and abs(value) != float("inf") else None
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    try:
        return float(value)
    except (TypeError, ValueError):
        return str(value)
