"""Column names: the standard ones, and a third party's names mapped onto them.

The standard names are those of the tables exactband writes (family, kind, n,
alpha, low, high, value, dispersion, c1, gamma1, c2, gamma2); they are
recognised in any letter case.  Other names are mapped by ``--map OURS=THEIRS``
or a mapping file (TOML)::

    # mapping for the vendor's sheet
    family = "poisson"            # optional: constants for the whole file
    kind = "band"
    [columns]
    n = "Units inspected"
    c1 = "Lower limit"
    gamma1 = "P(reject) at lower limit"

Columns not listed are ignored (and named in the summary).
"""

from __future__ import annotations

import tomllib
from pathlib import Path

from .errors import AuditInputError

INPUTS = ("family", "kind", "n", "alpha", "low", "high", "value", "dispersion")
ANSWERS = ("c1", "gamma1", "c2", "gamma2")
STANDARD = INPUTS + ANSWERS
EXTRA = ("id",)  # carried into the report when present
CONSTANTS = ("family", "kind", "dispersion")  # may be given once for the whole file
FILE_KEYS = CONSTANTS + ("decimal_mark",)


def _norm(name) -> str:
    return " ".join(str(name).split()).casefold()


def parse_map_flags(items) -> dict:
    """``['c1=Lower limit', ...]`` -> {'c1': 'Lower limit'}."""
    out = {}
    for item in items or ():
        ours, sep, theirs = item.partition("=")
        ours = ours.strip().lower()
        if not sep or not theirs.strip():
            raise AuditInputError(f"invalid --map = {item!r}: write OURS=THEIRS, e.g. "
                                  "--map c1='Lower limit'", field="--map", value=item,
                                  allowed="OURS=THEIRS")
        _check_ours(ours, f"--map {item!r}")
        out[ours] = theirs.strip()
    return out


def _check_ours(ours, where):
    if ours not in STANDARD + EXTRA:
        raise AuditInputError(f"invalid column {ours!r} in {where}: allowed "
                              + ", ".join(STANDARD + EXTRA))


def read_mapping_file(path) -> tuple[dict, dict]:
    """(column mapping, file constants) from a TOML mapping file."""
    p = Path(path)
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise AuditInputError(f"mapping file {p}: not found") from None
    except (UnicodeDecodeError, tomllib.TOMLDecodeError, OSError) as e:
        msg = " ".join(str(e).split())
        raise AuditInputError(f"mapping file {p}: not readable TOML ({msg})") from None
    cols = data.pop("columns", {})
    if not isinstance(cols, dict):
        raise AuditInputError(f"mapping file {p}: [columns] must be a table of OURS = \"THEIRS\"")
    unknown = [k for k in data if k not in FILE_KEYS]
    if unknown:
        raise AuditInputError(f"mapping file {p}: unknown key {unknown[0]!r}; allowed: [columns], "
                              + ", ".join(FILE_KEYS))
    mapping = {}
    for ours, theirs in cols.items():
        _check_ours(ours.lower(), f"mapping file {p}")
        if not isinstance(theirs, str) or not theirs.strip():
            raise AuditInputError(f"mapping file {p}: column {ours!r} must map to a column name")
        mapping[ours.lower()] = theirs.strip()
    consts = {k: str(v) for k, v in data.items()}
    return mapping, consts


def resolve(header: list, mapping: dict) -> tuple[dict, list]:
    """Map standard names to header positions; (positions, ignored column names).

    Raises AuditInputError on duplicated names and on mapped names not in the header.
    """
    where: dict = {}
    for i, name in enumerate(header):
        key = _norm(name)
        if not key:
            continue
        if key in where:
            raise AuditInputError(f"column {str(name).strip()!r} appears twice (columns "
                                  f"{where[key] + 1} and {i + 1}); rename or delete one")
        where[key] = i
    pos: dict = {}
    used = set()
    for ours in STANDARD + EXTRA:
        theirs = mapping.get(ours)
        if theirs is not None:
            key = _norm(theirs)
            if key not in where:
                raise AuditInputError(f"mapped column {theirs!r} (for {ours}) is not in the header; "
                                      "columns are: " + _list(header))
        elif ours in where:
            key = ours
        else:
            continue
        if key in used:
            raise AuditInputError(f"column {header[where[key]]!r} is mapped to two standard "
                                  "names; map each column once")
        used.add(key)
        pos[ours] = where[key]
    ignored = [str(h).strip() for k, h in ((_norm(h), h) for h in header)
               if k and k not in used]
    return pos, ignored


def _list(header) -> str:
    names = ", ".join(repr(str(h).strip()) for h in header if str(h).strip())
    return names if len(names) <= 200 else names[:197] + "..."
