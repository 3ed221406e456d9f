"""Seed the demo database: an invented plant, its materials, instruments and lots on every path.

`bandgate demo` (``make demo``) calls :func:`seed_demo`. It reads ``demo_data/scenario.json`` and the
committed spectrum files and creates everything through the ordinary use cases (the same ones the pages
and the API call), as the people of the scenario: the quality unit sets up materials and approves
specifications and references, a technician receives lots and uploads spectra, a supervisor reviews a
failed lot, QA releases a conforming one. Nothing here writes SQL.

It refuses any database that is not the demo one (see :mod:`service.store.demo_marker`), and a second
run on the seeded database creates nothing new.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from dataclasses import dataclass
from datetime import date, datetime, timedelta, timezone
from pathlib import Path
from typing import Any, TypeVar

from sqlalchemy.engine import Engine

from service import services as uc
from service.config import Mode, Settings
from service.errors import Conflict
from service.release.actor import Actor
from service.release.permissions import Action
from service.services.security_accounts import create_user as create_person
from service.services.security_sessions import SignedIn, sign_in, sign_out
from service.services.security_signing import sign_with_password
from service.store.demo_marker import SEEDED, SEEDING, demo_marker, set_demo_marker, tables_with_rows
from service.store.engine import make_engine

T = TypeVar("T")

DEMO_DATA_DIR = Path(__file__).resolve().parents[2] / "demo_data"


class DemoRefused(Conflict):
    """The demo seeding will not touch this database; the message says why and what to do."""

    code = "demo-refused"
    title = "Not the demo database"


@dataclass(frozen=True, kw_only=True)
class DemoPerson:
    username: str
    printed_name: str
    role: str
    password: str  # demo only: fixed so that a reused demo database still prints working logins


# Invented people. The passwords exist only in demo databases and are printed by `make demo`.
DEMO_PEOPLE: tuple[DemoPerson, ...] = (
    DemoPerson(username="t.ferrier", printed_name="Tomas Ferrier", role="technician",
               password="demo-bench-ferrier-7431"),
    DemoPerson(username="i.calloway", printed_name="Ines Calloway", role="supervisor",
               password="demo-review-calloway-2958"),
    DemoPerson(username="r.okafor", printed_name="Ruth Okafor", role="quality",
               password="demo-release-okafor-6604"),
    DemoPerson(username="m.lindqvist", printed_name="Mara Lindqvist", role="administrator",
               password="demo-admin-lindqvist-1187"),
)

CHECK_FILE_PASS = "instrument/polystyrene-film_pass.jdx"

REVIEW_REASONS = {
    "reject": "Identity test failed: ester carbonyl band near 1735 cm-1 where povidone must show none; the drum "
              "holds a vinyl acetate copolymer. No assignable laboratory cause. Supplier complaint raised.",
}
DISPOSITION_REASONS = {
    "release": "Identity conforms in every container; supplier's certificate of analysis reviewed.",
}


def logins() -> list[tuple[str, str, str]]:
    """The demo logins as (username, password, role)."""
    return [(p.username, p.password, p.role) for p in DEMO_PEOPLE]


def load_manifest(data_dir: Path = DEMO_DATA_DIR) -> dict[str, Any]:
    path = data_dir / "scenario.json"
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise DemoRefused(f"the demo data is missing ({path}); run `python -m demo_data.generate` "
                          "from the source tree") from None


def check_demo_database(settings: Settings) -> str | None:
    """Refuse unless ``settings`` name the demo database; returns its marker (None when new).

    Safe to call before migrating: a database that is not migrated yet but holds tables with rows
    is refused too, so `bandgate demo` never migrates or touches a real installation.
    """
    if settings.mode is not Mode.demo:
        raise DemoRefused("demo data is seeded only in demo mode; run `bandgate demo` (or `make demo`), "
                          "which uses its own database file")
    engine = make_engine(settings.database_url)
    try:
        marker = demo_marker(engine)
        if marker == SEEDING:
            raise DemoRefused(
                "an earlier demo seeding of this database stopped half-way; delete the demo database file "
                f"({_where(settings.database_url)}) and run `make demo` again")
        if marker is None:
            busy = tables_with_rows(engine, ignore=_SEEDED_BY_MIGRATIONS)
            if busy:
                raise DemoRefused(
                    f"the database {_where(settings.database_url)} already holds records ({', '.join(busy[:4])}) "
                    "and is not a demo database; the demo never seeds into it. Unset BANDGATE_DATABASE_URL to "
                    "use the demo file ./var/demo.db, or point it to a new, empty database")
        return marker
    finally:
        engine.dispose()


def seed_demo(settings: Settings, *, data_dir: Path = DEMO_DATA_DIR) -> list[tuple[str, str, str]]:
    """Seed the demo scenario into ``settings.database_url`` (migrated) and return the logins.

    Refuses outside demo mode, and refuses a database that holds records but is not marked as the
    demo database (:func:`check_demo_database`). On an already seeded demo database it only
    re-records the daily polystyrene check of the qualified instrument when that has lapsed.
    """
    marker = check_demo_database(settings)
    manifest = load_manifest(data_dir)
    engine = make_engine(settings.database_url)
    try:
        if marker == SEEDED:
            _keep_instrument_qualified(engine, settings, manifest, data_dir)
            return logins()
        set_demo_marker(engine, SEEDING)
        _seed(engine, settings, manifest, data_dir)
        set_demo_marker(engine, SEEDED)
        return logins()
    finally:
        engine.dispose()


# Tables that a freshly migrated database already fills (none of them is a record of work).
_SEEDED_BY_MIGRATIONS: frozenset[str] = frozenset()


def _where(url: str) -> str:
    """The database URL without a password, for messages."""
    if "@" in url and "://" in url:
        scheme, rest = url.split("://", 1)
        creds, host = rest.rsplit("@", 1)
        return f"{scheme}://{creds.split(':', 1)[0]}@{host}"
    return url


# --- the scenario ----------------------------------------------------------------------------------

SEEDING_ADDRESS = "127.0.0.1"
SEEDING_AGENT = "bandgate demo seeding"


@dataclass(frozen=True, kw_only=True)
class _AtWork:
    """A demo person signed in, signing as the pages do: user id and password for each signature."""

    engine: Engine
    person: DemoPerson
    signed_in: SignedIn

    @property
    def actor(self) -> Actor:
        return self.signed_in.actor

    def sign(self, action: Action, perform: Callable[[Actor], T]) -> T:
        return sign_with_password(self.engine, signed_in=self.signed_in, username=self.person.username,
                                  password=self.person.password, action=action, address=SEEDING_ADDRESS,
                                  perform=perform)


def _seed(engine: Engine, settings: Settings, manifest: dict[str, Any], data_dir: Path) -> None:
    people = _create_people(engine)
    try:
        qa, tech, supervisor = people["quality"], people["technician"], people["supervisor"]
        _set_up_materials(engine, qa, manifest, data_dir)
        _set_up_instruments(engine, qa.actor, tech.actor, manifest, data_dir)
        suppliers = {s["code"]: s["name"] for s in manifest["suppliers"]}
        today = datetime.now(timezone.utc).date()
        for i, lot in enumerate(manifest["lots"]):
            _run_lot(engine, settings, lot, data_dir, supplier=suppliers[lot["supplier"]], tech=tech.actor,
                     supervisor=supervisor, qa=qa, received_on=today - timedelta(days=len(manifest["lots"]) - i))
    finally:
        for at_work in people.values():
            sign_out(engine, at_work.signed_in.token)


def _create_people(engine: Engine) -> dict[str, _AtWork]:
    people: dict[str, _AtWork] = {}
    for p in DEMO_PEOPLE:
        create_person(engine, username=p.username, printed_name=p.printed_name, roles=[p.role],
                      password=p.password, must_change_password=False)
        signed_in = sign_in(engine, username=p.username, password=p.password, address=SEEDING_ADDRESS,
                            user_agent=SEEDING_AGENT)
        people[p.role] = _AtWork(engine=engine, person=p, signed_in=signed_in)
    return people


def _set_up_materials(engine: Engine, qa: _AtWork, manifest: dict[str, Any], data_dir: Path) -> None:
    for s in manifest["suppliers"]:
        uc.create_supplier(engine, qa.actor, name=s["name"])
    names = {s["code"]: s["name"] for s in manifest["suppliers"]}
    for m in manifest["materials"]:
        uc.create_material(engine, qa.actor, code=m["code"], name=m["name"], description=m["description"])
        document = json.loads((data_dir / m["specification"]).read_text(encoding="utf-8"))
        draft = uc.create_spec_draft(engine, qa.actor, material_code=m["code"], document=document)
        qa.sign(Action.sign_approval, lambda a, sid=draft.id: uc.approve_spec_version(
            engine, a, spec_version_id=sid, reason="Demo specification: bands from group-frequency tables"))
        ref_path = data_dir / m["reference"]
        ref = uc.add_reference(engine, qa.actor, material_code=m["code"], preparation=m["preparation"],
                               data=ref_path.read_bytes(), file_name=ref_path.name,
                               conditions="synthetic demo reference; 4 cm-1 resolution, 32 scans (invented)")
        qa.sign(Action.sign_approval, lambda a, rid=ref.id: uc.approve_reference(
            engine, a, reference_id=rid, reason="Demo reference spectrum"))
    for s in manifest["suppliers"]:
        for code in s["materials"]:
            uc.approve_supplier(engine, qa.actor, material_code=code, supplier_name=names[s["code"]],
                                reduced_plan=code in s.get("reduced_sampling", []))


def _set_up_instruments(engine: Engine, qa: Actor, tech: Actor, manifest: dict[str, Any], data_dir: Path) -> None:
    for inst in manifest["instruments"]:
        uc.register_instrument(engine, qa, code=inst["code"], kind=inst["kind"], location=inst["location"])
        _record_check(engine, tech, inst, data_dir)


def _record_check(engine: Engine, tech: Actor, inst: dict[str, Any], data_dir: Path) -> None:
    """Record the instrument's polystyrene check, its film measured ``check_age_days`` ago.

    A check meant to be old gets its measurement time written into a copy of the committed film's
    bytes at seeding time (``##LONGDATE``, in UTC, and a ``$$`` line saying the date is synthetic), so
    the ordinary check use case reads it from the file like any instrument's export: the check passes,
    is recorded now, and has lapsed by age. The committed file itself carries no date.
    """
    age = float(inst.get("check_age_days", 0.0))
    path = data_dir / CHECK_FILE_PASS
    data, name = path.read_bytes(), path.name
    if age > 0:
        measured = datetime.now(timezone.utc) - timedelta(days=age)
        data = dated_copy(data, measured)
        name = f"{path.stem}_measured-{measured:%Y%m%d}{path.suffix}"
    uc.record_instrument_check(engine, tech, instrument_code=inst["code"], data=data, file_name=name)


def dated_copy(jcamp: bytes, measured: datetime) -> bytes:
    """The JCAMP-DX bytes with ``##LONGDATE`` (UTC, JCAMP-DX 5.01 offset form) inserted after ``##TITLE``."""
    lines = jcamp.decode("ascii").split("\n")
    if not lines or not lines[0].startswith("##TITLE="):
        raise ValueError("the demo polystyrene file must start with ##TITLE=")
    stamp = [f"##LONGDATE={measured.astimezone(timezone.utc):%Y/%m/%d %H:%M:%S} +0000",
             "$$ SYNTHETIC DEMO DATA - measurement date written when the demo was seeded"]
    return "\n".join(lines[:1] + stamp + lines[1:]).encode("ascii")


def _keep_instrument_qualified(engine: Engine, settings: Settings, manifest: dict[str, Any], data_dir: Path) -> None:
    """On a reused demo database, the morning polystyrene check of the instrument meant to be qualified."""
    tech = uc.get_actor(engine, next(p.username for p in DEMO_PEOPLE if p.role == "technician"))
    for inst in manifest["instruments"]:
        if float(inst.get("check_age_days", 0.0)) > 0:
            continue
        view = uc.get_instrument(engine, inst["code"], check_days=settings.instrument_check_days)
        if not view.qualified:
            _record_check(engine, tech, inst, data_dir)


def _run_lot(engine: Engine, settings: Settings, lot: dict[str, Any], data_dir: Path, *, supplier: str,
             tech: Actor, supervisor: _AtWork, qa: _AtWork, received_on: date) -> None:
    view = uc.receive_lot(engine, tech, material_code=lot["material"], supplier_name=supplier,
                          supplier_lot=lot["supplier_lot"], containers=int(lot["containers"]),
                          received_on=received_on, retest_on=received_on + timedelta(days=730))
    for m in lot["measurements"]:
        path = data_dir / m["file"]
        try:
            uc.record_measurement(engine, tech, lot_code=view.code, container=int(m["container"]),
                                  instrument_code=lot["instrument"], data=path.read_bytes(), file_name=path.name,
                                  check_days=settings.instrument_check_days)
        except uc.MeasurementRefused:
            if not lot.get("expect_refused"):
                raise
    if lot["outcome"] == "reject":
        supervisor.sign(Action.sign_review, lambda a: uc.reject_after_review(
            engine, a, lot_code=view.code, reason=REVIEW_REASONS["reject"]))
    elif lot["outcome"] == "release":
        qa.sign(Action.sign_disposition, lambda a: uc.dispose_lot(
            engine, a, lot_code=view.code, outcome="released", reason=DISPOSITION_REASONS["release"]))
