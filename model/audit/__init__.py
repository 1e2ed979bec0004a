"""The record audit: what each recorded case consumed and emitted, and what it cost.

Per-case consumption, emissions and cost from case records, and their reconciliation with
purchases.
"""

from model.audit.engine import audit_records
from model.audit.reconcile import purchase_emissions, reconcile
from model.audit.result import DEFAULT_HIGH_FLOW_L_MIN, DEFAULT_HIGH_FLOW_LIMIT_MIN, AuditResult, summarise

__all__ = [
    "AuditResult",
    "DEFAULT_HIGH_FLOW_LIMIT_MIN",
    "DEFAULT_HIGH_FLOW_L_MIN",
    "audit_records",
    "purchase_emissions",
    "reconcile",
    "summarise",
]
