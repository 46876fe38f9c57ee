"""Formula audit: is a supplier's formula exactly the quantity, when does it hold, how wrong can it be."""

from handcheck.audit.findings import AuditFinding, WorstCase
from handcheck.audit.run import audit

__all__ = ["AuditFinding", "WorstCase", "audit"]
