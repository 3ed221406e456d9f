"""Use cases for people, materials, suppliers and approved-supplier links."""

from __future__ import annotations

import re

from sqlalchemy.engine import Engine

from service.errors import Conflict, FieldProblem, InvalidInput, NotFound
from service.release.actor import Actor
from service.store import repositories as repo
from service.store.tables import Material, Supplier, SupplierApproval, User, utc_now
from service.store.unit_of_work import UnitOfWork
from service.store.upload_records import UserRow
from service.services import _shared as sh
from service.services.views import MaterialView, SupplierApprovalView, SupplierView, UserView, utc

_USERNAME = re.compile(r"^[a-z0-9][a-z0-9._-]{1,63}$")
_CODE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$")


def _roles_text(roles: frozenset[str] | set[str] | list[str] | tuple[str, ...]) -> str:
    clean = sorted({r.strip() for r in roles if r and r.strip()})
    for r in clean:
        if not re.fullmatch(r"[a-z_]{2,32}", r):
            raise InvalidInput(f"role {r!r} is not a valid role name", fields=[FieldProblem("roles", "use lower-case names")])
    return ",".join(clean)


def user_view(u: User) -> UserView:
    return UserView(id=u.id or 0, username=u.username, printed_name=u.printed_name,
                    roles=tuple(r for r in u.roles.split(",") if r), active=u.active,
                    created_at=utc(u.created_at) or u.created_at)


def actor_for(u: User | UserRow) -> Actor:
    return Actor(user_id=u.id or 0, username=u.username, printed_name=u.printed_name,
                 roles=frozenset(r for r in u.roles.split(",") if r))


def create_user(engine: Engine, actor: Actor, *, username: str, printed_name: str,
                roles: frozenset[str] | set[str] | list[str] | tuple[str, ...] = ()) -> UserView:
    """Register a person. User ids are never reused (SQLite AUTOINCREMENT, PostgreSQL sequence)."""
    username = (username or "").strip().lower()
    if not _USERNAME.match(username):
        raise InvalidInput("the username must be 2-64 characters: lower-case letters, digits, '.', '_' or '-'",
                           fields=[FieldProblem("username", "use e.g. 'a.smith'")])
    name = sh.require_text(printed_name, "printed_name", "the printed name (shown with signatures)")
    with UnitOfWork(engine) as uow:
        if repo.user_by_username(uow.session, username):
            raise Conflict(f"the username {username!r} is taken (user ids and names are never reused)")
        u = User(username=username, printed_name=name, roles=_roles_text(roles), active=True, created_at=utc_now())
        repo.add(uow.session, u)
        sh.audit(uow.session, actor, "user.created", "user", u.id,
                 new={"username": u.username, "printed_name": u.printed_name, "roles": u.roles, "active": True})
        uow.commit()
        return user_view(u)


def get_actor(engine: Engine, username: str) -> Actor:
    """The Actor for an active user; raises NotFound for an unknown or disabled one."""
    with UnitOfWork(engine, write=False) as uow:
        u = repo.user_by_username(uow.session, (username or "").strip().lower())
        if u is None or not u.active:
            raise NotFound(f"no active user {username!r}")
        return actor_for(u)


def list_users(engine: Engine) -> list[UserView]:
    with UnitOfWork(engine, write=False) as uow:
        return [user_view(u) for u in repo.list_users(uow.session)]


def _material_view(m: Material) -> MaterialView:
    return MaterialView(id=m.id or 0, code=m.code, name=m.name, description=m.description,
                        created_at=utc(m.created_at) or m.created_at)


def create_material(engine: Engine, actor: Actor, *, code: str, name: str, description: str = "") -> MaterialView:
    code = (code or "").strip()
    if not _CODE.match(code):
        raise InvalidInput("the material code must be 1-64 letters, digits, '.', '_' or '-'",
                           fields=[FieldProblem("code", "use e.g. 'RM-0042'")])
    name = sh.require_text(name, "name", "the material name")
    with UnitOfWork(engine) as uow:
        if repo.material_by_code(uow.session, code):
            raise Conflict(f"a material with code {code!r} exists already")
        m = Material(code=code, name=name, description=(description or "").strip(), created_at=utc_now(),
                     created_by=actor.user_id)
        repo.add(uow.session, m)
        sh.audit(uow.session, actor, "material.created", "material", m.id,
                 new={"code": m.code, "name": m.name, "description": m.description})
        uow.commit()
        return _material_view(m)


def get_material(engine: Engine, code: str) -> MaterialView:
    with UnitOfWork(engine, write=False) as uow:
        return _material_view(sh.material(uow.session, code))


def list_materials(engine: Engine) -> list[MaterialView]:
    with UnitOfWork(engine, write=False) as uow:
        return [_material_view(m) for m in repo.list_materials(uow.session)]


def create_supplier(engine: Engine, actor: Actor, *, name: str) -> SupplierView:
    name = sh.require_text(name, "name", "the supplier name")
    with UnitOfWork(engine) as uow:
        if repo.supplier_by_name(uow.session, name):
            raise Conflict(f"a supplier named {name!r} exists already")
        s = Supplier(name=name, created_at=utc_now(), created_by=actor.user_id)
        repo.add(uow.session, s)
        sh.audit(uow.session, actor, "supplier.created", "supplier", s.id, new={"name": s.name})
        uow.commit()
        return SupplierView(id=s.id or 0, name=s.name)


def list_suppliers(engine: Engine) -> list[SupplierView]:
    with UnitOfWork(engine, write=False) as uow:
        return [SupplierView(id=s.id or 0, name=s.name) for s in repo.list_suppliers(uow.session)]


def approve_supplier(engine: Engine, actor: Actor, *, material_code: str, supplier_name: str,
                     reduced_plan: bool = False, active: bool = True, reason: str = "") -> SupplierApprovalView:
    """Create or change the approved-supplier link of a material (a change needs a reason)."""
    with UnitOfWork(engine) as uow:
        m = sh.material(uow.session, material_code)
        s = sh.supplier(uow.session, supplier_name)
        link = repo.approval_for(uow.session, m.id, s.id)  # type: ignore[arg-type]
        new = {"material": m.code, "supplier": s.name, "reduced_plan": bool(reduced_plan), "active": bool(active)}
        if link is None:
            link = SupplierApproval(material_id=m.id, supplier_id=s.id, reduced_plan=bool(reduced_plan),
                                    active=bool(active), created_at=utc_now(), created_by=actor.user_id)
            repo.add(uow.session, link)
            sh.audit(uow.session, actor, "supplier_approval.created", "supplier_approval", link.id, new=new,
                     reason=reason)
        else:
            old = {"material": m.code, "supplier": s.name, "reduced_plan": link.reduced_plan, "active": link.active}
            if old != new:
                why = sh.require_text(reason, "reason", "a reason for changing the supplier approval", max_len=2000)
                link.reduced_plan, link.active = bool(reduced_plan), bool(active)
                uow.session.add(link)
                sh.audit(uow.session, actor, "supplier_approval.changed", "supplier_approval", link.id,
                         old=old, new=new, reason=why)
        uow.commit()
        return SupplierApprovalView(material=m.code, supplier=s.name, reduced_plan=link.reduced_plan,
                                    active=link.active)


def supplier_approvals(engine: Engine, material_code: str) -> list[SupplierApprovalView]:
    with UnitOfWork(engine, write=False) as uow:
        m = sh.material(uow.session, material_code)
        out = []
        for a in repo.approvals_for_material(uow.session, m.id):  # type: ignore[arg-type]
            s = repo.supplier_by_id(uow.session, a.supplier_id)
            out.append(SupplierApprovalView(material=m.code, supplier=s.name if s else "?",
                                            reduced_plan=a.reduced_plan, active=a.active))
        return out
