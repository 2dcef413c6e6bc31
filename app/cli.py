"""Command line: parse, dispatch to one module per command (:mod:`app.commands`), and
turn every failure into one line.

``twistwise`` alone opens the desktop program on a bundled sample, ``twistwise FILE``
opens that project.  Exit codes: 0 success (check: pass), 1 a failing verdict
or an exceedance, 2 bad input (one line on stderr naming file, element and
field; never a traceback).  Only what a command needs is imported, after the
arguments are read, so ``--help`` starts fast.
"""
from __future__ import annotations

import argparse
import importlib
import os
import sys

from core.about import CAUTION, program_line
from core.errors import ModelError

from .commands import COMMANDS
from .commands.common import EXIT_BAD_INPUT, EXIT_INTERNAL, EXIT_OK, InputError

__all__ = ["main", "build_parser", "CAUTION", "InputError"]

USAGE_START = """\
ways to start:
  twistwise                      open the desktop program on a bundled sample
  twistwise FILE                 open a project in the desktop program
  twistwise COMMAND FILE ...     run one command without a window (listed above)
  python3 -m app ...             the same, without the installed script

exit codes: 0 success or pass, 1 a failing verdict or a limit exceeded,
2 bad input (one line naming the file, element and field), 3 internal error.

""" + CAUTION


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # one line, exit 2, no usage dump noise
        raise InputError(message)


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="twistwise", description="Torsional vibration screening of drive trains.",
                epilog=USAGE_START, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--version", action="version", version=program_line())
    sub = p.add_subparsers(dest="command", parser_class=_Parser, metavar="COMMAND")
    for name, module in COMMANDS.items():
        importlib.import_module(f"app.commands.{module}").add_parser(sub)
    return p


def _quiet_broken_pipe() -> int:
    """stdout was closed by the reader (``| head``): end quietly, as Unix tools do."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):
        pass
    return 141 if os.name == "posix" else 1  # 128 + SIGPIPE, the status a shell reports


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    if not argv or argv[0] not in COMMANDS and not argv[0].startswith("-"):
        # the desktop program: no argument, or a project file
        from app.gui.main_window import run_gui
        return run_gui(argv[0] if argv else None)
    file_arg = None
    try:
        args = build_parser().parse_args(argv)
        if args.command is None:
            build_parser().print_help()
            return EXIT_OK
        file_arg = getattr(args, "file", None)
        module = importlib.import_module(f"app.commands.{COMMANDS[args.command]}")
        code = module.run(args)
        sys.stdout.flush()
        return code
    except BrokenPipeError:
        return _quiet_broken_pipe()
    except InputError as exc:
        print(f"twistwise: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except ModelError as exc:
        where = f"{file_arg}: " if file_arg else ""
        print(f"twistwise: {where}{exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        return 130
    except SystemExit as exc:  # argparse --help / --version
        return int(exc.code or 0) if not isinstance(exc.code, str) else EXIT_BAD_INPUT
    except Exception as exc:  # never a traceback in front of a user
        try:
            print(f"twistwise: internal error ({type(exc).__name__}: {exc}); please report it with the "
                  "project file", file=sys.stderr)
        except (BrokenPipeError, OSError):
            pass
        return EXIT_INTERNAL


if __name__ == "__main__":  # python3 -m app.cli ..., the same as python3 -m app ...
    sys.exit(main())
