"""Printable critical-value tables from a versioned TOML spec.

``generate(spec, out_dir)`` writes NAME.csv, NAME.print.csv, NAME.xlsx,
NAME.pdf and NAME.manifest.json, every row verified by the high-precision
solver first; ``check_set(out_dir)`` re-verifies a generated set.

Modules by responsibility: spec and spec_keys (parse, validate), grid (expansion), build
(solve, verify, derive), cache (resumable verification), layout, texts and tablewords
(what is printed), write_csv / write_xlsx (xlsx_style, xlsx_power) / write_pdf (pdf_kit,
pdf_sections, pdf_pages, pdf_oc) / manifest (formatting only), publish (atomic writing
of the set), check (re-verification).
"""

from .check import check_set
from .publish import generate
from .spec import SpecError, TableSpec, load_spec

__all__ = ["SpecError", "TableSpec", "check_set", "generate", "load_spec"]
