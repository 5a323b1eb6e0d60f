"""The ``tdse1d`` command line: a thin layer over :mod:`tdse1d.api`.

Each command lives in its own module under :mod:`tdse1d.commands` and is listed in
:data:`COMMANDS`. A command module provides ``HELP`` (one line), ``add_arguments(parser)``
and ``main(args) -> int``. Adding a command is adding one module and one line here.

Exit status: 0 success, 1 a numerical or runtime failure, 2 bad input (one line on
stderr naming the file and key; ``--debug`` shows the traceback).
"""

from __future__ import annotations

import argparse
import importlib
import sys

from . import __version__
from .config import InputError
from .errors import NumericalError, OutputError

#: command name -> module implementing it
COMMANDS = {
    "states": "tdse1d.commands.states",
    "estimate": "tdse1d.commands.estimate",
    "run": "tdse1d.commands.run",
    "scan": "tdse1d.commands.scan",
    "compare": "tdse1d.commands.compare",
    "report": "tdse1d.commands.report",
    "plot": "tdse1d.commands.plot",
    "export": "tdse1d.commands.export",
    "validate": "tdse1d.commands.validate",
}

EXIT_OK, EXIT_FAILURE, EXIT_BAD_INPUT = 0, 1, 2


class CommandError(RuntimeError):
    """A failure that is not bad input: reported in one line, exit status 1."""


def _selected_command(argv) -> str | None:
    for arg in argv:
        if arg in COMMANDS:
            return arg
        if not arg.startswith("-"):
            return None
    return None


def build_parser(argv=()) -> argparse.ArgumentParser:
    """The argument parser. Only the command named in ``argv`` is imported (numba,
    matplotlib and dask make imports slow); without one, all are, to list them."""
    selected = _selected_command(argv)
    parser = argparse.ArgumentParser(
        prog="tdse1d",
        description="Full quantum runs of 1-D model atoms in strong laser fields, beside the semiclassical picture.",
    )
    parser.add_argument("--version", action="version", version=f"tdse1d {__version__}")
    parser.add_argument("--debug", action="store_true", help="show Python tracebacks")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, module_name in COMMANDS.items():
        if selected is not None and name != selected:
            sub.add_parser(name)
            continue
        module = importlib.import_module(module_name)
        p = sub.add_parser(name, help=module.HELP, description=module.HELP)
        p.add_argument("--debug", action="store_true", help="show Python tracebacks")
        module.add_arguments(p)
        p.set_defaults(_main=module.main)
    return parser


def add_input_arguments(parser: argparse.ArgumentParser) -> None:
    """The INPUT argument and ``--set`` overrides shared by the commands that read an input."""
    parser.add_argument("input", metavar="INPUT", help="input file (TOML)")
    parser.add_argument(
        "--set",
        dest="overrides",
        action="append",
        default=[],
        metavar="KEY=VALUE",
        help='override a key, e.g. --set laser.0.peak_intensity="2e14 W/cm^2" (repeatable)',
    )


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else list(argv)
    parser = build_parser(argv)
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse already printed its message
        return EXIT_BAD_INPUT if exc.code not in (0, None) else EXIT_OK
    if not getattr(args, "_main", None):
        parser.print_help()
        return EXIT_BAD_INPUT
    debug = args.debug or "--debug" in argv
    try:
        return int(args._main(args) or 0)
    except InputError as exc:
        if debug:
            raise
        print(f"tdse1d: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except NumericalError as exc:
        if debug:
            raise
        print(f"tdse1d: numerical failure: {exc}", file=sys.stderr)
        return EXIT_FAILURE
    except CommandError as exc:
        if debug:
            raise
        print(f"tdse1d: error: {exc}", file=sys.stderr)
        return EXIT_FAILURE
    except OutputError as exc:
        if debug:
            raise
        print(f"tdse1d: error: {exc}", file=sys.stderr)
        return EXIT_FAILURE
    except BrokenPipeError:
        # the reader went away (e.g. `tdse1d export ... | head`): not an error of ours
        import os

        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return EXIT_OK
    except KeyboardInterrupt:
        print("tdse1d: interrupted", file=sys.stderr)
        return 130
    except OSError as exc:  # a file that cannot be written or read (read-only, full disk...)
        if debug:
            raise
        from .store import describe_os_error

        print(f"tdse1d: error: {describe_os_error(exc, action=None)}", file=sys.stderr)
        return EXIT_FAILURE


def entry_point():  # console script
    sys.exit(main())


if __name__ == "__main__":  # pragma: no cover
    entry_point()
