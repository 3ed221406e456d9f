"""Fixtures for the evaluation tests (the factories themselves are in evaluation_factories.py)."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest
from evaluation_factories import real_spectra, synthetic

from service.spectra.model import Spectrum


@pytest.fixture
def make_spectrum() -> Callable[..., Spectrum]:
    return synthetic


@pytest.fixture
def load_real(shared_data: Path) -> Callable[[str], dict[str, Spectrum]]:
    return lambda file_name: real_spectra(shared_data, file_name)
