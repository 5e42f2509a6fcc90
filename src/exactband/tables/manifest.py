"""NAME.manifest.json: normalised spec, versions, cross-check summary, file hashes."""

from __future__ import annotations

import hashlib
import json

from ..crosscheck import PHI_TOL, SIZE_TOL
from .versions import versions

FORMAT = "exactband-table-set/1"


def sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def manifest_bytes(tset, files: dict) -> bytes:
    """The manifest for a table set whose other files are ``files`` (name -> bytes)."""
    spec, v = tset.spec, tset.verification
    doc = {
        "format": FORMAT,
        "name": spec.name,
        "spec_file": spec.source,
        "spec_sha256": spec.sha256,
        "spec": spec.to_dict(),
        "versions": versions(tset.oc is not None),
        "solver": {"fast": "vectorised float solver (scipy laws)",
                   "precise": "mpmath solver (own mpmath laws)", "precision": v.precision},
        "cross_check": {"rows": len(tset.rows), "rows_verified": v.rows,
                        "max_phi_difference": v.max_phi_diff,
                        "max_fast_size_error": v.max_fast_size_error,
                        "max_precise_size_error": v.max_precise_size_error,
                        "phi_tolerance": PHI_TOL, "size_tolerance": SIZE_TOL},
        "random_digits": {"seed": spec.seed, "count": len(tset.random_digits),
                          "generator": "Python random.Random(seed); digit = floor(10 * random())"},
        "files": {name: sha256(data) for name, data in sorted(files.items())},
    }
    return (json.dumps(doc, sort_keys=True, indent=2, ensure_ascii=False) + "\n").encode("utf-8")
