"""The upload path's one-statement list of approved references agrees with the long way round."""

from __future__ import annotations

from service.store import repositories as repo
from service.store.unit_of_work import UnitOfWork


def test_library_entries_match_materials_and_approved_references(lab) -> None:  # type: ignore[no-untyped-def]
    with UnitOfWork(lab.engine, write=False) as uow:
        s = uow.session
        codes = {m.id: m.code for m in repo.list_materials(s)}
        expected = [(r.id, codes[r.material_id], r.sha256) for r in repo.references(s, None, "approved")]
        got = repo.library_entries(s)
    assert expected, "the seeded lab has approved references"
    assert got == expected
    assert all(isinstance(code, str) and len(sha) == 64 for _id, code, sha in got)
