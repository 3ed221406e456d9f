"""The bundled list of common passwords, plus long ones generated from well-known patterns.

Source of the list: see ``data/SOURCE.md`` (Django's CommonPasswordValidator list, BSD licence).
The list is mostly shorter than our 12-character minimum, so we add, in memory, the long
passwords people actually choose: keyboard walks, digit runs, common words followed by years or
digit runs, and short words repeated. Comparison is on the lowercased, NFKC-normalised password.
"""

from __future__ import annotations

import gzip
import unicodedata
from functools import lru_cache
from pathlib import Path

DATA = Path(__file__).resolve().parent / "data" / "common-passwords.txt.gz"

_WORDS = (
    "password", "passw0rd", "p@ssword", "p@ssw0rd", "qwerty", "letmein", "welcome", "admin",
    "administrator", "iloveyou", "monkey", "dragon", "football", "baseball", "sunshine",
    "princess", "master", "shadow", "superman", "michael", "trustno1", "changeme", "secret",
    "default", "login", "user", "test", "guest", "qazwsx", "abc123", "abcdef", "summer", "winter",
    "spring", "autumn", "january", "february", "december", "laboratory", "quality", "qcqa",
    "pharma", "bandgate", "spectrum", "company", "computer", "internet", "starwars", "whatever",
)
_WALKS = (
    "qwertyuiop", "qwertyuiopasdfghjkl", "asdfghjkl", "zxcvbnm", "1qaz2wsx3edc", "1q2w3e4r5t6y",
    "q1w2e3r4t5y6", "qazwsxedcrfv", "zaq12wsxcde3", "1qaz2wsx3edc4rfv", "qwertyuiop[]",
    "!@#$%^&*()", "1234qwer", "qwer1234", "asdf1234", "zxcv1234", "1234asdf",
)
_DIGIT_RUNS = (
    "123", "1234", "12345", "123456", "1234567", "12345678", "123456789", "1234567890",
    "0987654321", "987654321", "111111", "000000", "121212", "112233", "123123", "!", "!!", "1!",
    "123!", "@123", "#1",
)


def _generated() -> set[str]:
    out: set[str] = set()
    out.update(_WALKS)
    for w in _WORDS:
        for suffix in _DIGIT_RUNS:
            out.add(w + suffix)
            out.add(suffix + w)
        for year in range(1950, 2041):
            out.add(f"{w}{year}")
            out.add(f"{w}{year}!")
            out.add(f"{w}@{year}")
        out.add(w + w)
        out.add(w * 3)
    for run in ("1234567890", "0987654321", "abcdefghijklmnopqrstuvwxyz", "qwertyuiopasdfghjklzxcvbnm"):
        for n in range(12, len(run) + 1):
            out.add(run[:n])
    for d in "0123456789":
        out.add(d * 12)
    return {p for p in out if len(p) >= 8}


def normalise(password: str) -> str:
    """The form we compare in: NFKC-normalised and lowercased."""
    return unicodedata.normalize("NFKC", password).lower()


@lru_cache(maxsize=1)
def common_passwords() -> frozenset[str]:
    """Every password we refuse as common (lowercased)."""
    with gzip.open(DATA, "rt", encoding="utf-8") as fh:
        listed = {line.strip() for line in fh if line.strip()}
    return frozenset({normalise(p) for p in listed | _generated()})


def is_common(password: str) -> bool:
    """True when the password is on the list, or is one short unit repeated (``abcabcabcabc``)."""
    p = normalise(password)
    if p in common_passwords():
        return True
    # One unit of 1-4 characters repeated to the full length is never a real secret.
    for size in range(1, 5):
        unit = p[:size]
        if unit and len(p) % size == 0 and unit * (len(p) // size) == p:
            return True
    return False
