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
        command = self.prog.split(" ", 1)[1] if " " in self.prog else ""
        raise UsageError(f"{command}: {message}" if command else message)


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
    parser.set_defaults(_commands=sub.choices)
    return parser


def check_options(parser, argv) -> None:
    """Name an unknown command or option (with the nearest one) before argparse
    reports something else first (e.g. a required option the misspelling hid)."""
    from ..strict import suggest

    commands = parser.get_default("_commands") or {}
    at = next((i for i, a in enumerate(argv) if not a.startswith("-")), None)
    if at is None or any(a in ("-h", "--help", "--version") for a in argv[:at]):
        return
    for arg in argv[:at]:
        if arg.startswith("-"):
            raise UsageError(f"unknown option {arg.split('=', 1)[0]} before the command "
                             f"(options go after it: exactband COMMAND OPTIONS)")
    name = argv[at]
    if name not in commands:
        raise UsageError(f"unknown command {name!r}: choose from {', '.join(COMMANDS)}"
                         + suggest(name, COMMANDS))
    known = {o for a in commands[name]._actions for o in a.option_strings}
    for arg in argv[at + 1:]:
        if arg == "--":
            break
        option = arg.split("=", 1)[0]
        if option.startswith("--") and option not in known:
            longs = {o[2:]: o for o in known if o.startswith("--")}
            hint = suggest(option[2:], sorted(longs))
            raise UsageError(f"{name}: unknown option {option}"
                             + (hint.replace("mean ", "mean --") if hint else ""))


EMPTY_PATHS = ("out", "report", "plot", "check", "table", "file", "spec")


def check_paths(args) -> None:
    """A file or folder option given as an empty string is refused (it would mean '.')."""
    for attr in EMPTY_PATHS:
        value = getattr(args, attr, None)
        if isinstance(value, str) and not value.strip():
            option = attr.upper() if attr in ("file", "spec") else f"--{attr}"
            raise UsageError(f"{args.command}: invalid {option} = {value!r}: a file or folder "
                             "name is required")


class _PipeGuard:
    """stdout that survives a reader closing the pipe early: later output is dropped
    (and noted), so the command still ends with its own exit code."""

    def __init__(self, stream):
        self.stream, self.broken = stream, False

    def write(self, text):
        if not self.broken:
            try:
                return self.stream.write(text)
            except BrokenPipeError:
                self._closed()
        return len(text)

    def flush(self):
        if not self.broken:
            try:
                self.stream.flush()
            except BrokenPipeError:
                self._closed()

    def _closed(self):
        self.broken = True
        try:  # nothing more reaches the closed pipe, not even at interpreter exit
            null = os.open(os.devnull, os.O_WRONLY)
            os.dup2(null, self.stream.fileno())
            os.close(null)
        except (OSError, ValueError, AttributeError):
            pass

    def __getattr__(self, name):
        return getattr(self.stream, name)


MEANING = {0: "ok", 1: "findings", 2: "unusable input", 70: "internal error", 130: "interrupted"}


def fail(message: str) -> int:
    print(f"exactband: error: {message}", file=sys.stderr)
    return 2


def _os_message(e: OSError) -> str:
    where = e.filename if e.filename is not None else ""
    reason = e.strerror or type(e).__name__
    return f"{where}: {reason}" if where else f"{reason}"


def _run(argv) -> int:
    try:
        parser = build_parser()
        check_options(parser, argv)
        args = parser.parse_args(argv)
        if not getattr(args, "command", None):
            parser.print_help()
            return 2
        check_paths(args)
        return int(args.run(args) or 0)
    except UsageError as e:
        return fail(str(e))
    except VerificationError as e:
        print(f"exactband: {e}", file=sys.stderr)
        return 1
    except ExactbandError as e:
        return fail(str(e))
    except KeyboardInterrupt:
        print("exactband: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        raise
    except OSError as e:  # a file or folder that cannot be read or written: the user's to fix
        return fail(_os_message(e))
    except Exception as e:  # an internal fault: one line, traceback on request
        if os.environ.get("EXACTBAND_DEBUG"):
            raise
        print(f"exactband: internal error: {type(e).__name__}: {e} "
              "(set EXACTBAND_DEBUG=1 for a traceback)", file=sys.stderr)
        return 70


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else list(argv)
    real = sys.stdout
    guard = _PipeGuard(real) if real is not None else None
    if guard is not None:
        sys.stdout = guard
    try:
        try:
            code = _run(argv)
        except BrokenPipeError:  # raised outside a write we guard: the result is unknown
            if guard is not None:
                guard._closed()
            code = 2
        if guard is not None:
            guard.flush()
            if guard.broken:
                print(f"exactband: standard output was closed early; exit {code} "
                      f"({MEANING.get(code, 'see the README')})", file=sys.stderr)
        return code
    finally:
        if guard is not None and sys.stdout is guard:
            sys.stdout = real


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
