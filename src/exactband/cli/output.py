"""Output helpers of the planning commands: CSV text of a frame, files written atomically."""

from __future__ import annotations

import csv
import io
import json
import math


def cell(v) -> str:
    """One CSV cell: floats at full precision (repr), booleans as true/false, None empty."""
    if v is None:
        return ""
    if isinstance(v, bool) or type(v).__name__ == "bool_":
        return "true" if v else "false"
    if isinstance(v, float) or type(v).__name__.startswith("float"):
        x = float(v)
        return "" if math.isnan(x) else repr(x)
    if type(v).__name__.startswith("int"):
        return str(int(v))
    from ..fileio import safe_cell_text

    return safe_cell_text(v)


def frame_csv(frame) -> str:
    """RFC 4180 text (CRLF line ends) of a DataFrame, deterministic."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(list(frame.columns))
    for row in frame.itertuples(index=False, name=None):
        w.writerow([cell(v) for v in row])
    return buf.getvalue()


def frame_records(frame) -> list:
    out = []
    for row in frame.itertuples(index=False, name=None):
        rec = {}
        for k, v in zip(frame.columns, row):
            if type(v).__name__ in ("bool_", "bool"):
                rec[k] = bool(v)
            elif isinstance(v, (int, float)) or type(v).__name__.startswith(("float", "int")):
                rec[k] = float(v) if not type(v).__name__.startswith("int") else int(v)
            else:
                rec[k] = v
        out.append(rec)
    return out


def json_text(obj) -> str:
    return json.dumps(obj, indent=2, allow_nan=False) + "\n"


def emit(text: str, out=None) -> None:
    """Print to stdout, or write the file OUT atomically."""
    if out is None:
        print(text, end="")
        return
    from ..fileio import atomic_write_text

    atomic_write_text(out, text)


def require(args, names, command: str) -> None:
    """Options a command needs although the shared group marks them optional."""
    from . import UsageError

    missing = [f"--{n}" for n in names if getattr(args, n, None) in (None, "")]
    if missing:
        raise UsageError(f"{command}: the following arguments are required: "
                         + ", ".join(missing))
