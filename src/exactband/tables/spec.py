"""Table spec: read a committee's TOML file, validate every key, normalise it.

A spec names the family, the kinds, the alphas, the sample sizes and the
hypothesis values of a table set, and how it is printed.  Every mistake a user
can make gives one line naming the file, the key, the value given and what is
allowed (``SpecError``); nothing is computed or written before the whole spec
and its grid have passed.

Keys (see README): title, scenario, family, dispersion, kinds, alpha, n (list
or ``{from, to, step}``), bands, values, gamma_decimals, random_digits,
conservative, paper, precision (old name: digits), random_seed, random_digit_pages, and the optional
``[oc]`` table (spec_oc: power values and OC curves in the set).
"""

from __future__ import annotations

import hashlib
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from ..design import DEFAULT_RANDOM_DIGITS
from ..errors import show
from ..families import FAMILIES, get_family
from ..kinds import KINDS
from .spec_keys import (
    LARGE_LIMIT,
    TWO_POINT,
    Checker,
    SpecError,
    alpha_check,
    dispersion_of,
    hypotheses,
    n_values,
    show_value,
)
from .spec_oc import MAX_PAGES, OC_KEYS, OcSpec, curve_pages, parse_oc

GRID_LIMIT = 20_000  # designs in one set without --allow-large
MAX_SPEC_BYTES = 1_000_000

KEYS = ("title", "scenario", "family", "dispersion", "kinds", "alpha", "n", "bands", "values",
        "gamma_decimals", "random_digits", "conservative", "paper", "precision", "random_seed",
        "random_digit_pages", "cutoff_decimals", "oc")
OLD_KEYS = {"digits": "precision"}  # old name -> new name: accepted, with one note
REQUIRED = ("title", "family", "kinds", "alpha", "n")
PAPERS = {"a4": "A4", "letter": "Letter"}
_NAME_RE = re.compile(r"[A-Za-z0-9][A-Za-z0-9._-]*")


@dataclass(frozen=True)
class TableSpec:
    """A validated, normalised table spec.

    ``name`` (the file's stem) names the output files; ``sha256`` is the hash
    of the spec file's bytes, printed on every page as provenance.
    """

    name: str
    source: str
    sha256: str
    title: str
    scenario: str
    family: str
    dispersion: float | None
    kinds: tuple
    alpha: tuple
    n: tuple
    bands: tuple
    values: tuple
    gamma_decimals: int = 4
    random_digits: int = DEFAULT_RANDOM_DIGITS
    conservative: bool = True
    paper: str = "A4"
    precision: int = 50
    random_seed: int | None = None
    random_digit_pages: int = 1
    oc: OcSpec | None = None  # the optional [oc] table (power values, OC curves)
    cutoff_decimals: int | None = None  # decimals of printed real cutoffs (continuous families)
    where: str = field(default="", compare=False)  # the path as the user gave it (messages)
    notes: tuple = field(default=(), compare=False)  # e.g. an old key name that was accepted

    @property
    def seed(self) -> int:
        """Seed of the random-digit pages: the spec's, else the first 60 bits of its hash."""
        return self.random_seed if self.random_seed is not None else int(self.sha256[:15], 16)

    def size(self) -> int:
        """Number of designs in the grid."""
        return grid_size(self.kinds, len(self.alpha), len(self.n), len(self.bands),
                         len(self.values))

    def to_dict(self) -> dict:
        """The normalised spec (n expanded to its list), as recorded in the manifest."""
        out = {
            "title": self.title, "scenario": self.scenario, "family": self.family,
            "dispersion": self.dispersion, "kinds": list(self.kinds), "alpha": list(self.alpha),
            "n": list(self.n), "bands": [list(b) for b in self.bands], "values": list(self.values),
            "gamma_decimals": self.gamma_decimals, "random_digits": self.random_digits,
            "conservative": self.conservative, "paper": self.paper, "precision": self.precision,
            "random_seed": self.seed, "random_digit_pages": self.random_digit_pages,
            "cutoff_decimals": self.cutoff_decimals,
        }
        if self.oc is not None:
            out["oc"] = self.oc.to_dict()
        return {k: v for k, v in out.items() if v is not None and (v != [] or k == "n")}


def grid_size(kinds, n_alpha, n_n, n_bands, n_values) -> int:
    per = sum(n_bands if k in TWO_POINT else n_values for k in kinds)
    return per * n_alpha * n_n


# -- reading ------------------------------------------------------------------------
def load_spec(path, allow_large: bool = False) -> TableSpec:
    """Read, validate and normalise the TOML spec at ``path`` (raises SpecError)."""
    p = Path(path)
    where = str(path)
    if not p.exists():
        raise SpecError(f"{where}: no such file (expected a TOML table spec)")
    if not p.is_file():
        raise SpecError(f"{where}: not a file (expected a TOML table spec)")
    if p.suffix.lower() != ".toml":
        raise SpecError(f"{where}: the spec file name must end in .toml")
    if not _NAME_RE.fullmatch(p.stem):
        raise SpecError(f"{where}: invalid spec name = {show(p.stem)}: the name (it names the "
                        "output files) may use letters, digits, '.', '_' and '-' only")
    try:
        raw = p.read_bytes()
    except OSError as e:
        raise SpecError(f"{where}: cannot be read: {e.strerror or e}") from None
    if len(raw) > MAX_SPEC_BYTES:
        raise SpecError(f"{where}: the file has {len(raw)} bytes; a spec may have at most "
                        f"{MAX_SPEC_BYTES}")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as e:
        raise SpecError(f"{where}: not UTF-8 text (byte {e.start}); save the spec as "
                        "UTF-8") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        raise SpecError(f"{where}: not valid TOML: {' '.join(str(e).split())}") from None
    return from_mapping(data, name=p.stem, source=p.name, where=where,
                        sha256=hashlib.sha256(raw).hexdigest(), allow_large=allow_large)


def from_mapping(data: dict, *, name: str, source: str, where: str, sha256: str,
                 allow_large: bool = False) -> TableSpec:
    """Validate a spec given as a mapping (the parsed TOML, or a manifest's spec)."""
    v = Checker(where)
    data, notes = _renamed_keys(v, data)
    unknown = [k for k in data if k not in KEYS]
    if unknown:
        raise v.fail(f"unknown key {show(unknown[0])}: allowed keys are {', '.join(KEYS)}",
                     unknown[0], data[unknown[0]], f"the keys {', '.join(KEYS)}")
    inside = data["oc"] if isinstance(data.get("oc"), dict) else {}
    misplaced = [k for k in inside if k in KEYS and (k not in OC_KEYS or k not in data)]
    if misplaced:
        raise v.fail(f"the key {misplaced[0]!r} is inside the [oc] table: put [oc] at the end "
                     "of the spec (in TOML every key after a [table] line belongs to it)")
    for key in REQUIRED:
        if key not in data:
            raise v.fail(f"missing key {key!r}: a spec needs {', '.join(REQUIRED)}", key)
    title = v.text("title", data["title"], 200, one_line=True)
    scenario = v.text("scenario", data.get("scenario", ""), 4000, one_line=False, empty=True)
    fam_name = v.choice("family", data["family"], tuple(FAMILIES))
    fam = get_family(fam_name)
    kinds = v.names("kinds", data["kinds"], tuple(KINDS))
    dispersion = dispersion_of(v, fam, data)
    alphas = v.number_list("alpha", data["alpha"], alpha_check)
    ns = n_values(v, fam, data["n"])
    bands, values = hypotheses(v, fam, kinds, data)
    gd = v.integer("gamma_decimals", data.get("gamma_decimals", 4), 1, 10)
    rd = v.integer("random_digits", data.get("random_digits", DEFAULT_RANDOM_DIGITS), 2, 4)
    conservative = data.get("conservative", True)
    if not isinstance(conservative, bool):
        raise v.bad("conservative", conservative, "true or false (without quotes)")
    paper = v.choice("paper", data.get("paper", "A4"), tuple(PAPERS.values()))
    precision = v.integer("precision", data.get("precision", 50), 20, 1000)
    seed = data.get("random_seed")
    if seed is not None:
        seed = v.integer("random_seed", seed, 0, 2**63 - 1)
    pages = v.integer("random_digit_pages", data.get("random_digit_pages", 1), 0, 20)
    oc = parse_oc(v, fam, data["oc"], ns, conservative) if "oc" in data else None
    cd = None
    if not fam.discrete:  # real cutoffs, printed to a stated number of decimals
        cd = v.integer("cutoff_decimals", data.get("cutoff_decimals", 4), 0, 12)
    elif "cutoff_decimals" in data:
        raise v.bad("cutoff_decimals", data["cutoff_decimals"], "only for a family with real "
                    f"cutoffs; the {fam.name} family's cutoffs are whole numbers: leave it out")
    spec = TableSpec(name, source, sha256, title, scenario, fam.name, dispersion, kinds,
                     alphas, ns, bands, values, gd, rd, conservative, paper, precision, seed, pages,
                     oc, cd, where=where, notes=tuple(notes))
    _check_size(v, spec, allow_large)
    _check_curve_pages(v, spec)
    return spec


def _renamed_keys(v: Checker, data: dict):
    """Old key names (``digits``) read as the new ones, each with one note."""
    notes = []
    for old, new in OLD_KEYS.items():
        if old in data:
            if new in data:
                raise v.fail(f"both {old!r} and {new!r} are given: keep {new!r} only "
                             f"({old!r} is its old name)")
            data = {(new if k == old else k): val for k, val in data.items()}
            notes.append(f"{where_of(v)}note: the key {old!r} is now called {new!r}; "
                         f"read as {new} = {show_value(data[new])}")
    return data, notes


def where_of(v: Checker) -> str:
    w = getattr(v, "where", "")
    return f"{w}: " if w else ""


def _check_size(v: Checker, spec: TableSpec, allow_large: bool) -> None:
    total = spec.size()
    limit = LARGE_LIMIT if allow_large else GRID_LIMIT
    if total > limit:
        shrink = "shrink kinds, alpha, n, bands or values"
        hint = shrink if allow_large else f"pass --allow-large (up to {LARGE_LIMIT}) or {shrink}"
        raise v.fail(f"invalid grid size = {total} designs: at most {limit}; {hint}")


def _check_curve_pages(v: Checker, spec: TableSpec) -> None:
    if spec.oc is None:
        return
    pages = curve_pages(spec.kinds, len(spec.alpha), len(spec.bands), len(spec.values), spec.oc)
    if pages > MAX_PAGES:
        ns = [int(x) if float(x).is_integer() else x for x in spec.oc.n]  # 10.0 -> 10
        raise v.fail(f"invalid oc.n = {show_value(ns)}: the OC curves would take "
                     f"{pages} pages; at most {MAX_PAGES}: draw fewer n (oc.n), more per chart "
                     "(oc.n_per_chart) or set oc.curves = false")
