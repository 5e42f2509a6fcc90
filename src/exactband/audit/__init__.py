"""Audit a third party's table or program output against the exact optimal rules.

``audit(path, Options(...))`` reads a CSV or XLSX file (every row present,
hashed), recomputes every row with both solvers (the high-precision one
decides), and returns an AuditResult: one Verdict per row under the written
policy of ``policy`` (ok / finding / invalid, reasons, numbers, the sizes THEIR
printed numbers attain, and for a finding the diagnosis of what construction
they used instead and the lowest power of their rule outside the null).  ``reports``
turns a result into the stdout summary and the CSV / XLSX / JSON reports;
``challenge`` builds a set of hard designs for a vendor to fill in.
"""

from .errors import AuditInputError
from .run import AuditResult, audit
from .table import Options

__all__ = ["AuditInputError", "AuditResult", "Options", "audit"]
