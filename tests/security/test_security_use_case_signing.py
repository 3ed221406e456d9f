"""The records layer's signing use cases themselves refuse a signer whose roles do not allow it,
even when called without the page (defence in depth behind the password check)."""

from __future__ import annotations

import pytest

from service import services as uc
from service.release.permissions import NotEntitledToSign
from service.store.engine import make_engine

import records_spectra
from records_factories import make_material, make_user


def test_technician_and_administrator_cannot_approve_a_specification(db_url: str) -> None:
    engine = make_engine(db_url)
    qa = make_user(engine, "quinn.qa", roles=("quality",))
    tech = make_user(engine, "tess.tech", roles=("technician",))
    admin = make_user(engine, "ada.admin", roles=("administrator",))
    make_material(engine, qa, code="TOL-01", name="Toluene")
    draft = uc.create_spec_draft(engine, qa, material_code="TOL-01", document=records_spectra.TOLUENE_SPEC)
    for who in (tech, admin):
        with pytest.raises(NotEntitledToSign):
            uc.approve_spec_version(engine, who, spec_version_id=draft.id, reason="looks fine")
    assert uc.signatures(engine, "specification_version", draft.id) == []
    approved = uc.approve_spec_version(engine, qa, spec_version_id=draft.id, reason="method validated")  # control
    assert approved.status == "approved"
    assert [s.username for s in uc.signatures(engine, "specification_version", draft.id)] == ["quinn.qa"]
    engine.dispose()
