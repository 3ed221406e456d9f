"""Use cases (receive lot, record measurement, evaluate, decide, sign): the only place that commits.

Every use case takes the engine, the acting person (:class:`service.release.Actor`) where it
writes, and keyword-only arguments; it returns frozen views (``service.services.views``) and
raises the typed errors of ``service.errors``. See ``docs/records.md``.
"""

from service.release.actor import Actor
from service.release.qualification import CheckTimeRefused
from service.services.audit_trail import AuditReport, audit_events, export_lot, lot_record, verify_audit
from service.services.catalog import (
    approve_supplier, create_material, create_supplier, create_user, get_actor, get_material, list_materials,
    list_suppliers, list_users, supplier_approvals,
)
from service.services.decisions import dispose_lot, invalidate_measurement, reject_after_review
from service.services.instruments import (
    get_instrument, instrument_checks, list_instruments, record_instrument_check, register_instrument,
)
from service.services.lots import get_lot, list_lots, receive_lot
from service.services.measurements import (
    MeasurementRefused, NamedOperator, UploadUnreadable, get_measurement, measurement_file, record_measurement,
    record_measurement_with_state,
)
from service.services.specifications import (
    add_reference, approve_reference, approve_spec_version, create_spec_draft, effective_spec, get_spec_version,
    list_references, reference_file, signatures, spec_versions,
)
from service.store.audit import SYSTEM_ACTOR

__all__ = [
    "Actor", "AuditReport", "CheckTimeRefused", "MeasurementRefused", "NamedOperator", "SYSTEM_ACTOR", "UploadUnreadable", "add_reference",
    "approve_reference", "approve_spec_version", "approve_supplier", "audit_events", "create_material",
    "create_spec_draft", "create_supplier", "create_user", "dispose_lot", "effective_spec", "export_lot",
    "get_actor", "get_instrument", "get_lot", "get_material", "get_measurement", "get_spec_version",
    "instrument_checks", "invalidate_measurement", "list_instruments", "list_lots", "list_materials",
    "list_references", "list_suppliers", "list_users", "lot_record", "measurement_file", "receive_lot",
    "record_instrument_check", "record_measurement", "record_measurement_with_state", "reference_file", "register_instrument",
    "reject_after_review", "signatures", "spec_versions", "supplier_approvals", "verify_audit",
]
