"""Command line: thin layer that parses, calls the library and prints.

Each command lives in its own module with ``add_parser(subparsers)`` and
``run(args) -> int``; register new ones in COMMANDS.  Exit codes: 0 ok,
1 a finding (e.g. an audit mismatch, solvers disagreeing), 2 unusable input
(one line on stderr, no traceback).
"""

from __future__ import annotations

import argparse
import os
import sys

from ..errors import ExactbandError, VerificationError

COMMANDS = ["design", "table", "audit", "challenge", "power", "plan", "decide"]  # --help order


class UsageError(ExactbandError):
    """Bad command-line usage (exit 2)."""


class Parser(argparse.ArgumentParser):
    """argparse with one-line errors and exit code 2; options are never abbreviated
    (so a mistyped --n cannot silently become --n-max)."""

    def __init__(self, *args, **kwargs):
        kwargs.setdefault("allow_abbrev", False)
        super().__init__(*args, **kwargs)

    def error(self, message):  # noqa: D401 - argparse API
        raise UsageError(f"{self.prog}: {message}")


def build_parser() -> argparse.ArgumentParser:
    from importlib import import_module

    from .. import __version__

    parser = Parser(
        prog="exactband",
        description=("Exact optimal (UMP / UMPU) decision rules for count and proportion data, "
                     "computed by two independent solvers that must agree."),
        epilog="Run 'exactband COMMAND --help' for the options of one command.",
    )
    parser.add_argument("--version", action="version", version=f"exactband {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=Parser)
    for name in COMMANDS:
        module = import_module(f".{name}", __name__)
        module.add_parser(sub)
    return parser


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    try:
        parser = build_parser()
        args = parser.parse_args(argv)
        if not getattr(args, "command", None):
            parser.print_help()
            return 2
        return int(args.run(args) or 0)
    except UsageError as e:
        print(f"error: {e}", file=sys.stderr)
        return 2
    except VerificationError as e:
        print(f"exactband: {e}", file=sys.stderr)
        return 1
    except ExactbandError as e:
        print(f"exactband: error: {e}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("exactband: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0
    except Exception as e:  # an internal fault: one line, traceback on request
        if os.environ.get("EXACTBAND_DEBUG"):
            raise
        print(f"exactband: internal error: {type(e).__name__}: {e} "
              "(set EXACTBAND_DEBUG=1 for a traceback)", file=sys.stderr)
        return 70


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
