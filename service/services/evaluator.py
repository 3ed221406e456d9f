"""The seam to the spectral core: reading uploads, parsing specifications, evaluating, checking instruments.

The use cases call these functions rather than importing the core directly, so the records layer
depends on the core's public API only, in one place. Parsed references and specifications are
cached by content digest (they are immutable once approved).
"""

from __future__ import annotations

import json
import threading
from collections import OrderedDict
from collections.abc import Callable
from typing import Any

from service.errors import ServiceUnavailable
from service.release.digests import sha256_hex

_CACHE_SIZE = 64
_spectra: "OrderedDict[str, Any]" = OrderedDict()
_specs: "OrderedDict[str, Any]" = OrderedDict()
_documents: "OrderedDict[str, dict[str, Any]]" = OrderedDict()
_lock = threading.Lock()  # the caches are shared by the server's worker threads


def _missing(what: str, exc: ImportError) -> ServiceUnavailable:
    return ServiceUnavailable(f"{what} is not available in this installation ({exc}); reinstall Bandgate")


def read_spectrum(data: bytes, *, file_name: str = "") -> Any:
    """Read an uploaded file into a Spectrum; raises the reader's UnusableInput with its message.

    The spectrum's ``meta.sha256`` is the SHA-256 (hex) of ``data``: callers may keep it instead of hashing again.
    """
    try:
        from service.spectra.readers import read_spectrum as _read
    except ImportError as exc:  # pragma: no cover - only in a broken installation
        raise _missing("the spectrum reader", exc) from None
    return _read(data, file_name=file_name)


def read_cached(data: bytes, *, file_name: str = "") -> Any:
    """read_spectrum for stored, immutable files (references), cached by SHA-256."""
    key = sha256_hex(data)
    with _lock:
        hit = _spectra.get(key)
    if hit is not None:
        return hit
    spectrum = read_spectrum(data, file_name=file_name)
    with _lock:
        _spectra[key] = spectrum
        while len(_spectra) > _CACHE_SIZE:
            _spectra.popitem(last=False)
    return spectrum


def stored_document(text: str) -> dict[str, Any]:
    """A stored specification's JSON, parsed once per text (callers must not change the dict)."""
    with _lock:
        hit = _documents.get(text)
    if hit is not None:
        return hit
    doc = json.loads(text)
    with _lock:
        _documents[text] = doc
        while len(_documents) > _CACHE_SIZE:
            _documents.popitem(last=False)
    return doc  # type: ignore[no-any-return]


def parse_specification(document: dict[str, Any], *, stored_text: str | None = None) -> Any:
    """Validate a specification document; raises the evaluator's InvalidInput naming every field.

    ``stored_text`` (the stored JSON the document was parsed from) keys the cache without
    serialising the document again.
    """
    try:
        from service.evaluation import parse_specification as _parse
    except ImportError as exc:  # pragma: no cover
        raise _missing("the evaluator", exc) from None
    key = "text:" + stored_text if stored_text is not None else sha256_hex(
        json.dumps(document, sort_keys=True, default=str))
    with _lock:
        hit = _specs.get(key)
    if hit is not None:
        return hit
    spec = _parse(document)
    with _lock:
        _specs[key] = spec
        while len(_specs) > _CACHE_SIZE:
            _specs.popitem(last=False)
    return spec


def evaluate(*, sample: Any, spec: Any, reference: Any, library: Any = None,
             reference_preparation: str | None = None) -> Any:
    """Run the evaluator; returns an object with ``.verdict`` and ``.as_dict()``."""
    try:
        from service.evaluation import evaluate as _evaluate
    except ImportError as exc:  # pragma: no cover
        raise _missing("the evaluator", exc) from None
    return _evaluate(sample, spec, reference, library, reference_preparation=reference_preparation)


_libraries: "OrderedDict[tuple[Any, ...], Any]" = OrderedDict()


def reference_spectrum(sha256: str, load: Callable[[], tuple[bytes, str]]) -> Any:
    """A stored reference read once and cached by its SHA-256; ``load`` gives (bytes, file name) on a miss."""
    with _lock:
        hit = _spectra.get(sha256)
    if hit is not None:
        return hit
    data, name = load()
    return read_cached(data, file_name=name)


def library_for(entries: list[tuple[int, str, str]], load: Callable[[int], tuple[bytes, str]]) -> Any:
    """The mix-up library of approved references, cached by their (id, material code, sha256).

    ``load(reference_id)`` gives (bytes, file name) for a reference not yet cached; an empty list
    gives None (no library search).
    """
    if not entries:
        return None
    key = tuple(entries)
    with _lock:
        hit = _libraries.get(key)
    if hit is not None:
        return hit
    try:
        from service.evaluation import ReferenceLibrary
    except ImportError as exc:  # pragma: no cover
        raise _missing("the reference library", exc) from None
    lib = ReferenceLibrary.build([(code, reference_spectrum(sha, lambda rid=rid: load(rid)))
                                  for rid, code, sha in entries])
    with _lock:
        _libraries[key] = lib
        while len(_libraries) > 8:
            _libraries.popitem(last=False)
    return lib


def check_polystyrene(spectrum: Any) -> tuple[bool, dict[str, Any]]:
    """Run the polystyrene film check (Ph. Eur. 2.2.24); returns (passed, JSON-safe result)."""
    try:
        from service.spectra.polystyrene import check_polystyrene as _check
    except ImportError as exc:  # pragma: no cover
        raise _missing("the polystyrene check", exc) from None
    result = _check(spectrum)
    return bool(result.passed), result.as_dict()


def known_preparations() -> tuple[str, ...]:
    """Preparation codes the evaluator knows (a reference must name one of them)."""
    try:
        from service.evaluation import PREPARATIONS
    except ImportError as exc:  # pragma: no cover
        raise _missing("the evaluator", exc) from None
    return tuple(PREPARATIONS)
