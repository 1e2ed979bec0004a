"""The record audit: per-case consumption, emissions and cost from case records, and
reconciliation with purchases."""


from model.audit.engine import audit_records
from model.audit.result import AuditResult, summarise
from model.audit.reconcile import purchase_emissions, reconcile

__all__ = ["AuditResult", "audit_records", "purchase_emissions", "reconcile", "summarise"]
