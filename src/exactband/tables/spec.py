"""Table spec: read a committee's TOML file, validate every key, normalise it.

A spec names the family, the kinds, the alphas, the sample sizes and the
hypothesis values of a table set, and how it is printed.  Every mistake a user
can make gives one line naming the file, the key, the value given and what is
allowed (``SpecError``); nothing is computed or written before the whole spec
and its grid have passed.

Keys (see README): title, scenario, family, dispersion, kinds, alpha, n (list
or ``{from, to, step}``), bands, values, gamma_decimals, random_digits,
conservative, paper, digits, random_seed, random_digit_pages.
"""

from __future__ import annotations

import hashlib
import math
import re
import tomllib
from dataclasses import dataclass, field
from decimal import Decimal
from pathlib import Path

from ..errors import DesignError, ExactbandError, show
from ..families import FAMILIES, get_family
from ..kinds import KINDS

GRID_LIMIT = 20_000  # designs in one set without --allow-large
LARGE_LIMIT = 200_000  # designs in one set with --allow-large
MAX_SPEC_BYTES = 1_000_000
TWO_POINT = ("band", "equivalence")  # kinds that read `bands`
ONE_POINT = ("upper", "lower", "point")  # kinds that read `values`

KEYS = ("title", "scenario", "family", "dispersion", "kinds", "alpha", "n", "bands", "values",
        "gamma_decimals", "random_digits", "conservative", "paper", "digits", "random_seed",
        "random_digit_pages")
REQUIRED = ("title", "family", "kinds", "alpha", "n")
PAPERS = {"a4": "A4", "letter": "Letter"}
_NAME_RE = re.compile(r"[A-Za-z0-9][A-Za-z0-9._-]*")


class SpecError(ExactbandError, ValueError):
    """A table spec (or the folder it is written to) is unusable: one line, exit 2."""


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
    random_digits: int = 3
    conservative: bool = True
    paper: str = "A4"
    digits: int = 50
    random_seed: int | None = None
    random_digit_pages: int = 1
    where: str = field(default="", compare=False)  # the path as the user gave it (messages)

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
            "conservative": self.conservative, "paper": self.paper, "digits": self.digits,
            "random_seed": self.seed, "random_digit_pages": self.random_digit_pages,
        }
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
        raise SpecError(f"{where}: not UTF-8 text (byte {e.start}); save the spec as UTF-8") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        raise SpecError(f"{where}: not valid TOML: {' '.join(str(e).split())}") from None
    return from_mapping(data, name=p.stem, source=p.name, where=where,
                        sha256=hashlib.sha256(raw).hexdigest(), allow_large=allow_large)


def from_mapping(data: dict, *, name: str, source: str, where: str, sha256: str,
                 allow_large: bool = False) -> TableSpec:
    """Validate a spec given as a mapping (the parsed TOML, or a manifest's spec)."""
    v = _Checker(where)
    unknown = [k for k in data if k not in KEYS]
    if unknown:
        raise v.fail(f"unknown key {show(unknown[0])}: allowed keys are {', '.join(KEYS)}")
    for key in REQUIRED:
        if key not in data:
            raise v.fail(f"missing key {key!r}: a spec needs {', '.join(REQUIRED)}")
    title = v.text("title", data["title"], 200, one_line=True)
    scenario = v.text("scenario", data.get("scenario", ""), 4000, one_line=False, empty=True)
    fam_name = v.choice("family", data["family"], tuple(FAMILIES))
    fam = get_family(fam_name)
    kinds = v.names("kinds", data["kinds"], tuple(KINDS))
    dispersion = _dispersion(v, fam, data)
    alphas = v.number_list("alpha", data["alpha"], _alpha_check)
    ns = _n_values(v, fam, data["n"])
    bands, values = _hypotheses(v, fam, kinds, data)
    gd = v.integer("gamma_decimals", data.get("gamma_decimals", 4), 1, 10)
    rd = v.integer("random_digits", data.get("random_digits", 3), 2, 4)
    conservative = data.get("conservative", True)
    if not isinstance(conservative, bool):
        raise v.bad("conservative", conservative, "true or false (without quotes)")
    paper = v.choice("paper", data.get("paper", "A4"), tuple(PAPERS.values()))
    digits = v.integer("digits", data.get("digits", 50), 20, 1000)
    seed = data.get("random_seed")
    if seed is not None:
        seed = v.integer("random_seed", seed, 0, 2**63 - 1)
    pages = v.integer("random_digit_pages", data.get("random_digit_pages", 1), 0, 20)
    spec = TableSpec(name, source, sha256, title, scenario, fam.name, dispersion, kinds,
                     alphas, ns, bands, values, gd, rd, conservative, paper, digits, seed, pages,
                     where=where)
    _check_size(v, spec, allow_large)
    return spec


# -- pieces -----------------------------------------------------------------------------
class _Checker:
    """Builds the one-line messages: '<file>: invalid <key> = <value>: <allowed>'."""

    def __init__(self, where: str):
        self.where = where

    def fail(self, text: str) -> SpecError:
        return SpecError(f"{self.where}: {text}")

    def bad(self, key: str, value, allowed: str) -> SpecError:
        return self.fail(f"invalid {key} = {_show(value)}: {allowed}")

    def rekey(self, key: str, err: DesignError) -> SpecError:
        """A core DesignError ('invalid <field> = ...') re-labelled with the spec key."""
        msg = str(err)
        m = re.match(r"invalid [A-Za-z_]+ = ", msg)
        if m:
            return self.fail(f"invalid {key} = " + msg[m.end():])
        return self.fail(f"{key}: {msg}")

    def text(self, key, value, limit, one_line, empty=False) -> str:
        if not isinstance(value, str):
            raise self.bad(key, value, "a text string in quotes is required")
        s = value.strip()
        if not s and not empty:
            raise self.bad(key, value, "a non-empty text is required")
        if one_line and ("\n" in s or "\r" in s):
            raise self.bad(key, value, "one line of text is required (no line breaks)")
        if len(s) > limit:
            raise self.bad(key, value, f"at most {limit} characters (it has {len(s)})")
        if any(ord(c) < 32 and c not in "\n\t" for c in s):
            raise self.bad(key, value, "printable text is required (no control characters)")
        bad = [c for c in s if not _printable(c)]
        if bad:
            raise self.bad(key, value, f"the PDF fonts print Western European text "
                           f"(Windows-1252) only; replace {bad[0]!r}")
        return s

    def choice(self, key, value, allowed: tuple) -> str:
        if not isinstance(value, str):
            raise self.bad(key, value, "one of " + ", ".join(allowed) + " (in quotes)")
        for a in allowed:
            if value.strip().lower() == a.lower():
                return a
        raise self.bad(key, value, "one of " + ", ".join(allowed))

    def names(self, key, value, allowed: tuple) -> tuple:
        example = f'{key} = ["{allowed[0]}"]'
        if not isinstance(value, list):
            raise self.bad(key, value, f"a list of names from {', '.join(allowed)}, e.g. {example}")
        if not value:
            raise self.bad(key, value, f"at least one of {', '.join(allowed)} is required")
        out = [self.choice(f"{key}[{i}]", x, allowed) for i, x in enumerate(value)]
        _no_duplicates(self, key, out)
        return tuple(out)

    def number(self, key, value) -> float | int:
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            hint = " (without quotes)" if isinstance(value, str) else ""
            raise self.bad(key, value, f"a number is required{hint}")
        if isinstance(value, float) and not math.isfinite(value):
            raise self.bad(key, value, "a finite number is required")
        return value

    def integer(self, key, value, lo, hi) -> int:
        if isinstance(value, bool) or not isinstance(value, int) or not lo <= value <= hi:
            raise self.bad(key, value, f"a whole number from {lo} to {hi}")
        return value

    def number_list(self, key, value, check) -> tuple:
        if not isinstance(value, list):
            raise self.bad(key, value, f"a list of numbers is required, e.g. {key} = [{_show(value)}]"
                           if isinstance(value, (int, float)) and not isinstance(value, bool)
                           else "a list of numbers is required")
        if not value:
            raise self.bad(key, value, "at least one value is required")
        out = []
        for i, x in enumerate(value):
            k = f"{key}[{i}]"
            out.append(check(self, k, self.number(k, x)))
        _no_duplicates(self, key, out)
        return tuple(out)


def _printable(c: str) -> bool:
    """Whether the PDF's standard fonts (WinAnsi encoding) can print the character."""
    try:
        c.encode("cp1252")
        return True
    except UnicodeEncodeError:
        return False


def _show(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, dict):
        return show("{" + ", ".join(f"{k} = {_show(x)}" for k, x in value.items()) + "}")
    if isinstance(value, list):
        return show("[" + ", ".join(_show(x) for x in value) + "]")
    return show(value)


def _no_duplicates(v: _Checker, key, items) -> None:
    seen = {}
    for i, x in enumerate(items):
        if x in seen:
            raise v.bad(f"{key}[{i}]", x, f"each entry once; it repeats {key}[{seen[x]}]")
        seen[x] = i


def _alpha_check(v: _Checker, key, a):
    if not 1e-300 <= a < 1:
        raise v.bad(key, a, "alpha must satisfy 0 < alpha < 1 (and alpha >= 1e-300)")
    if 1 - a < 1e-15:
        raise v.bad(key, a, "alpha must be at most 1 - 1e-15")
    return float(a)


def _dispersion(v: _Checker, fam, data):
    if "dispersion" not in data:
        if fam.uses_dispersion:
            raise v.fail(f"missing key 'dispersion': the {fam.name} family needs a known "
                         "dispersion k > 0")
        return None
    k = data["dispersion"]
    if not fam.uses_dispersion:
        raise v.bad("dispersion", k, f"the {fam.name} family takes no dispersion; leave the "
                    "key out (it is used only by negative-binomial)")
    v.number("dispersion", k)
    try:
        return fam.check_dispersion(k)
    except DesignError as e:
        raise v.rekey("dispersion", e) from None


def _n_check(fam):
    def check(v: _Checker, key, x):
        try:
            return fam.check_n(x)
        except DesignError as e:
            raise v.rekey(key, e) from None
    return check


def _n_values(v: _Checker, fam, value) -> tuple:
    if isinstance(value, list):
        return v.number_list("n", value, _n_check(fam))
    if not isinstance(value, dict):
        raise v.bad("n", value, "a list of sample sizes, or a table {from = A, to = B, step = C}")
    extra = [k for k in value if k not in ("from", "to", "step")]
    if extra:
        raise v.bad(f"n.{extra[0]}", value[extra[0]], "n as a table takes only from, to, step")
    for k in ("from", "to", "step"):
        if k not in value:
            raise v.bad("n", value, f"n as a table needs from, to and step (missing {k})")
        v.number(f"n.{k}", value[k])
    lo, hi, step = (Decimal(repr(value[k])) if isinstance(value[k], float) else Decimal(value[k])
                    for k in ("from", "to", "step"))
    if step <= 0:
        raise v.bad("n.step", value["step"], "a number > 0")
    if hi < lo:
        raise v.bad("n.to", value["to"], f"n.to must be at least n.from = {_show(value['from'])}")
    if fam.integer_n and step != step.to_integral_value():
        raise v.bad("n.step", value["step"], f"a whole number for the {fam.name} family")
    count = int((hi - lo) / step) + 1
    if count > LARGE_LIMIT:
        raise v.bad("n", value, f"it gives {count} sample sizes; at most {LARGE_LIMIT}")
    check = _n_check(fam)
    out = []
    for i in range(count):
        x = lo + i * step
        out.append(check(v, "n.from" if i == 0 else "n", int(x) if fam.integer_n else float(x)))
    return tuple(out)


def _hypotheses(v: _Checker, fam, kinds, data):
    uses_bands = [k for k in kinds if k in TWO_POINT]
    uses_values = [k for k in kinds if k in ONE_POINT]
    bands = values = ()
    for key, users, readers in (("bands", uses_bands, TWO_POINT), ("values", uses_values, ONE_POINT)):
        if users and key not in data:
            raise v.fail(f"missing key {key!r}: the kind(s) {', '.join(users)} need {key}")
        if key in data and not users:
            raise v.bad(key, data[key], f"no kind in kinds reads {key} (only "
                        f"{', '.join(readers)} do); remove the key or add such a kind")
    if uses_values:
        def theta(v_, key, x):
            try:
                return fam.check_theta(key, x)
            except DesignError as e:
                raise v_.rekey(key, e) from None
        values = v.number_list("values", data["values"], theta)
    if uses_bands:
        bands = _bands(v, fam, data["bands"])
    return bands, values


def _bands(v: _Checker, fam, value) -> tuple:
    allowed = "a list of [low, high] pairs, e.g. bands = [[2.0, 2.5], [1.5, 2.0]]"
    if not isinstance(value, list) or not value:
        raise v.bad("bands", value, allowed)
    out = []
    for i, pair in enumerate(value):
        key = f"bands[{i}]"
        if not isinstance(pair, list) or len(pair) != 2:
            raise v.bad(key, pair, "a pair [low, high] of numbers")
        ends = []
        for j, x in enumerate(pair):
            k = f"{key}[{j}]"
            v.number(k, x)
            try:
                ends.append(fam.check_theta(k, x))
            except DesignError as e:
                raise v.rekey(k, e) from None
        if not ends[0] < ends[1]:
            raise v.bad(key, pair, "low must be smaller than high")
        out.append(tuple(ends))
    _no_duplicates(v, "bands", out)
    return tuple(out)


def _check_size(v: _Checker, spec: TableSpec, allow_large: bool) -> None:
    total = spec.size()
    limit = LARGE_LIMIT if allow_large else GRID_LIMIT
    if total > limit:
        hint = ("shrink kinds, alpha, n, bands or values" if allow_large else
                f"pass --allow-large (up to {LARGE_LIMIT}) or shrink kinds, alpha, n, bands or values")
        raise v.fail(f"invalid grid size = {total} designs: at most {limit}; {hint}")
