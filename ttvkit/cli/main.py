"""The ``ttvkit`` command.

Each sub-command is a small function that reads its arguments, calls the
library and prints.  Any :class:`~ttvkit.errors.TtvkitError` becomes one
line on stderr and exit status 2; ``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import argparse
import os
import signal
import sys
import textwrap
import warnings

from ttvkit._version import __version__
from ttvkit.cli import budget, calibrate, demo, diagnose, fitting, measure, perturbers, planets, survey, tables
from ttvkit.errors import TtvkitError, TtvkitWarning

__all__ = ["main", "build_parser"]

#: The sub-command modules, in the order ``ttvkit --help`` lists them.
COMMANDS = (tables, demo, budget, measure, fitting, diagnose, calibrate, perturbers, planets, survey)


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``ttvkit`` command."""
    parser = argparse.ArgumentParser(
        prog="ttvkit",
        description="Transit and eclipse timing: put mid-times in BJD_TDB, fit every "
                    "explanation of a timing drift and test each against the physics.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog="Run 'ttvkit COMMAND --help' for a command's options and examples.")
    parser.add_argument("--version", action="version", version=f"ttvkit {__version__}")
    parser.add_argument("--debug", action="store_true", help="show tracebacks of errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    for module in COMMANDS:
        module.add_commands(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``ttvkit`` command; returns the exit status."""
    parser = build_parser()
    args = parser.parse_args(_join_negative_values(sys.argv[1:] if argv is None else list(argv)))
    if args.command is None:
        parser.print_help()
        return 0
    previous = _interrupt_on_sigterm()
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", TtvkitWarning)
            status = args.func(args)
        for w in caught:
            if issubclass(w.category, TtvkitWarning):
                print(f"warning: {w.message}", file=sys.stderr)
            elif w.category.__module__.split(".")[0] in ("erfa", "astropy"):  # never swallowed
                print(f"warning: (time conversion) {_one_line(str(w.message))}", file=sys.stderr)
        return status
    except TtvkitError as exc:
        if args.debug:
            raise
        print(f"ttvkit {args.command}: error: {_one_line(str(exc))}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print(f"ttvkit {args.command}: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:   # the reader went away (`ttvkit ... | head`): nothing is wrong, stop quietly
        try:
            sys.stdout = open(os.devnull, "w")    # so the interpreter's final flush does not complain
        except OSError:
            pass
        return 0
    except Exception as exc:  # the user must never see a traceback by default
        if args.debug:
            raise
        print(f"ttvkit {args.command}: internal error ({type(exc).__name__}: "
              f"{_one_line(str(exc))}); rerun with --debug and report it", file=sys.stderr)
        return 1
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


def _interrupt_on_sigterm():
    """Turn SIGTERM into KeyboardInterrupt so staging folders and partial files are cleaned up."""
    def handler(signum, frame):
        raise KeyboardInterrupt

    try:
        return signal.signal(signal.SIGTERM, handler)
    except ValueError:  # not the main thread: leave signals alone
        return None


def _join_negative_values(argv: list) -> list:
    """``--dec -12:01:02`` as ``--dec=-12:01:02``: argparse takes a value starting with '-' for an option."""
    out = []
    i = 0
    while i < len(argv):
        item = argv[i]
        if item in ("--dec", "--ra", "--ephemeris") and i + 1 < len(argv) and argv[i + 1].startswith("-") \
                and len(argv[i + 1]) > 1 and (argv[i + 1][1].isdigit() or argv[i + 1][1] == "."):
            out.append(f"{item}={argv[i + 1]}")
            i += 2
            continue
        out.append(item)
        i += 1
    return out


def _one_line(text: str) -> str:
    """One line per problem: a table's list of problems keeps its ``  - `` items."""
    lines = textwrap.dedent(text).splitlines()
    out = [" ".join(lines[0].split())] if lines else [""]
    for line in lines[1:]:
        if line.lstrip().startswith("- ") or line.lstrip().startswith("... and"):
            out.append("  " + " ".join(line.split()))
        elif line.strip():
            out[-1] += " " + " ".join(line.split())
    return "\n".join(out)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())

