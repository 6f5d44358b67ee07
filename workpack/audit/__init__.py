"""The audit of the records: what was issued, what came back, what it showed, and whether
the records are still what was written. Pure: the shell reads the store and the packages.

- ``audit.report``: the report's data (``AuditReport`` and its parts), nothing worded;
- ``audit.build``: ``build_audit``, records + packages + the store's verification → report;
- ``audit.trends``: the insulation trend of each item measured;
- ``audit.wording``: every heading, sentence and value as the renderings print them.

The renderers (``render.audit_html``, ``render.audit_pdf``, with ``render.trend_chart``)
only lay these out.
"""

from workpack.audit.build import build_audit
from workpack.audit.report import (
    STATUSES,
    AuditFilter,
    AuditReport,
    Integrity,
    IrTrend,
    OpenIsolation,
    PackageAudit,
    ReadingLine,
    RecordRef,
    Status,
    TrendPoint,
)

__all__ = [
    "STATUSES",
    "AuditFilter",
    "AuditReport",
    "Integrity",
    "IrTrend",
    "OpenIsolation",
    "PackageAudit",
    "ReadingLine",
    "RecordRef",
    "Status",
    "TrendPoint",
    "build_audit",
]
