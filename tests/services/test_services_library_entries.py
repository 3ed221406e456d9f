"""The upload path's one-statement list of approved references agrees with the long way round."""

from __future__ import annotations

from service.store import repositories as repo
from service.store import upload_records
from service.store.unit_of_work import UnitOfWork


def test_library_entries_match_materials_and_approved_references(lab) -> None:  # type: ignore[no-untyped-def]
    with UnitOfWork(lab.engine, write=False) as uow:
        s = uow.session
        codes = {m.id: m.code for m in repo.list_materials(s)}
        expected = [(r.id, codes[r.material_id], r.sha256) for r in repo.references(s, None, "approved")]
        got = upload_records.library_entries(uow.connection)
    assert expected, "the seeded lab has approved references"
    assert got == expected
    assert all(isinstance(code, str) and len(sha) == 64 for _id, code, sha in got)


def test_the_upload_look_ups_agree_with_the_orm_long_way_round(lab) -> None:  # type: ignore[no-untyped-def]
    """upload_records' approved spec and reference are the ones the ORM repositories find."""
    with UnitOfWork(lab.engine, write=False) as uow:
        s = uow.session
        tol = next(m for m in repo.list_materials(s) if m.code == "TOL-01")
        spec = repo.approved_spec(s, tol.id)  # type: ignore[arg-type]
        refs = [r for r in repo.references(s, tol.id, "approved")]
        row = upload_records.approved_spec(uow.connection, tol.id)  # type: ignore[arg-type]
        ref = upload_records.approved_reference(uow.connection, tol.id, "atr-diamond")  # type: ignore[arg-type]
        other_prep = upload_records.approved_reference(uow.connection, tol.id, "kbr-disc")  # type: ignore[arg-type]
        ids = upload_records.approved_ids(uow.connection, tol.id, "atr-diamond")  # type: ignore[arg-type]
    assert spec is not None and row is not None and (row.id, row.version, row.document) == (
        spec.id, spec.version, spec.document)
    newest = max(refs, key=lambda r: r.id or 0)
    assert ref is not None and (ref.id, ref.preparation, ref.sha256) == (newest.id, newest.preparation, newest.sha256)
    assert other_prep is not None and other_prep.id == newest.id  # no kbr-disc reference: the newest of any
    assert ids == (spec.id, newest.id)
