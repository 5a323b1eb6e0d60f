"""The ``tdse1d`` command line: a thin layer over :mod:`tdse1d.api`.

Each command lives in its own module of :mod:`tdse1d.cli` and is listed in
:data:`COMMANDS`. A command module provides ``HELP`` (one line), ``add_arguments(parser)``
and ``main(args) -> int``. Adding a command is adding one module and one line here.

Exit status: 0 success; 1 a numerical or runtime failure; 2 bad input: an input file,
a command-line option, or a file given to read (a missing, unfinished or incomplete
result file) (one line on stderr naming the file and the key or option; ``--debug``
shows the traceback); 130 interrupted by Ctrl-C (one line, at any moment, also while
the program starts).

Numeric options are checked by the argument types below (:func:`positive_int`, ...),
so a negative worker count or a NaN resolution is refused before anything runs.
"""

from __future__ import annotations

# Only the standard library at module level: a Ctrl-C while heavy modules (numpy,
# numba, matplotlib, dask) load must land inside main()'s handler, not in an import.
import argparse
import importlib
import math
import sys

from .. import __version__

#: command name -> module implementing it
COMMANDS = {
    "states": "tdse1d.cli.states",
    "estimate": "tdse1d.cli.estimate",
    "run": "tdse1d.cli.run",
    "scan": "tdse1d.cli.scan",
    "compare": "tdse1d.cli.compare",
    "report": "tdse1d.cli.report",
    "plot": "tdse1d.cli.plot",
    "export": "tdse1d.cli.export",
    "validate": "tdse1d.cli.validate",
    "sfa": "tdse1d.cli.sfa",
}

EXIT_OK, EXIT_FAILURE, EXIT_BAD_INPUT, EXIT_INTERRUPTED = 0, 1, 2, 130


class CommandError(RuntimeError):
    """A failure that is not bad input: reported in one line, exit status 1."""


def _selected_command(argv) -> str | None:
    for arg in argv:
        if arg in COMMANDS:
            return arg
        if not arg.startswith("-"):
            return None
    return None


class _UsageError(Exception):
    """A command-line option argparse refused (reported as one line, exit status 2)."""


class _Parser(argparse.ArgumentParser):
    """argparse, with its errors as one line instead of a usage block and an exit."""

    def error(self, message):
        raise _UsageError(f"{message} (see '{self.prog} --help')")


# ------------------------------------------------------------ option value types


def _number(text: str, kind, what: str):
    try:
        value = kind(text)
    except (TypeError, ValueError):
        raise argparse.ArgumentTypeError(f"must be {what}, got {text!r}") from None
    if isinstance(value, float) and not math.isfinite(value):
        raise argparse.ArgumentTypeError(f"must be {what}, got {text!r}")
    if isinstance(value, int) and abs(value) >= 2**63:  # beyond what numpy indexes
        raise argparse.ArgumentTypeError(f"must be {what} below 2^63, got {len(text)} digits")
    return value


def positive_int(text: str) -> int:
    """An option value that is an integer >= 1."""
    value = _number(text, int, "a positive integer")
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be a positive integer, got {text!r}")
    return value


def nonnegative_int(text: str) -> int:
    """An option value that is an integer >= 0 (an index)."""
    value = _number(text, int, "an integer >= 0")
    if value < 0:
        raise argparse.ArgumentTypeError(f"must be an integer >= 0, got {text!r}")
    return value


def positive_float(text: str) -> float:
    """An option value that is a finite number > 0."""
    value = _number(text, float, "a finite positive number")
    if not value > 0:
        raise argparse.ArgumentTypeError(f"must be a finite positive number, got {text!r}")
    return value


def nonnegative_float(text: str) -> float:
    """An option value that is a finite number >= 0."""
    value = _number(text, float, "a finite number >= 0")
    if value < 0:
        raise argparse.ArgumentTypeError(f"must be a finite number >= 0, got {text!r}")
    return value


#: most local worker processes per core: each runs CPU-bound propagations, so more
#: than a few per core only adds memory and start-up time
WORKERS_PER_CORE = 4


def worker_count(text: str) -> int:
    """A number of local worker processes: 1 to :data:`WORKERS_PER_CORE` per core."""
    import os

    value = positive_int(text)
    cores = os.cpu_count() or 1
    if value > WORKERS_PER_CORE * cores:
        raise argparse.ArgumentTypeError(
            f"{value} workers on {cores} cores is more than {WORKERS_PER_CORE} per core; "
            "for more, start a cluster and give its --scheduler")
    return value


#: transports of a Dask scheduler address
SCHEDULER_SCHEMES = ("tcp", "tls", "ws", "wss", "ucx", "inproc")


def scheduler_address(text: str) -> str:
    """A Dask scheduler address ``[SCHEME://]HOST:PORT`` (scheme tcp by default)."""
    example = "tcp://HOST:PORT, e.g. tcp://10.0.0.5:8786"
    scheme, sep, rest = text.partition("://")
    if not sep:
        scheme, rest = "tcp", text
    host, colon, port = rest.rpartition(":")
    if scheme not in SCHEDULER_SCHEMES:
        raise argparse.ArgumentTypeError(
            f"{text!r} is not a scheduler address: unknown scheme {scheme!r} (one of {', '.join(SCHEDULER_SCHEMES)})")
    if scheme != "inproc" and not (colon and host.strip("[]") and port.isdigit() and 0 < int(port) < 65536):
        raise argparse.ArgumentTypeError(f"{text!r} is not a scheduler address; write it as {example}")
    return text


def build_parser(argv=()) -> argparse.ArgumentParser:
    """The argument parser. Only the command named in ``argv`` gets its arguments (a
    command's options may need its library: ``plot`` lists its figures); without one,
    each command module is imported for its one-line ``HELP`` only, and those modules
    import nothing heavy at module level (tests/test_startup.py checks it)."""
    selected = _selected_command(argv)
    parser = _Parser(
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
        if selected is None:  # the list of commands: their one-line help is all it needs
            sub.add_parser(name, help=module.HELP)
            continue
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
    """Run the command line; returns the exit status (see the module docstring)."""
    argv = sys.argv[1:] if argv is None else list(argv)
    debug = "--debug" in argv
    try:
        return _main(argv, debug)
    except KeyboardInterrupt:
        # anywhere: while the command's modules load, while parsing, while it works
        if debug:
            raise
        print("tdse1d: interrupted", file=sys.stderr)
        return EXIT_INTERRUPTED


def _main(argv, debug) -> int:
    try:
        parser = build_parser(argv)
        args = parser.parse_args(argv)
    except _UsageError as exc:
        print(f"tdse1d: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except SystemExit as exc:  # --help and --version printed their text
        return EXIT_BAD_INPUT if exc.code not in (0, None) else EXIT_OK
    if not getattr(args, "_main", None):
        parser.print_help()
        return EXIT_BAD_INPUT
    try:
        return int(args._main(args) or 0)
    except (ValueError, RuntimeError, MemoryError, OSError) as exc:
        if debug and not isinstance(exc, BrokenPipeError):
            raise
        return _failure(exc)


def _failure(exc: BaseException) -> int:
    """One line on stderr for a failure of a command, and its exit status; re-raises
    what is not one of ours. The exception classes are imported here, not at start-up:
    by the time a command failed, their modules are loaded (``--help`` stays light)."""
    from ..errors import NumericalError, OutputError

    input_error = getattr(sys.modules.get("tdse1d.input.spec"), "InputError", None)
    if input_error is not None and isinstance(exc, input_error):
        print(f"tdse1d: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    if isinstance(exc, NumericalError):
        print(f"tdse1d: numerical failure: {exc}", file=sys.stderr)
        return EXIT_FAILURE
    if isinstance(exc, (CommandError, OutputError)):
        print(f"tdse1d: error: {exc}", file=sys.stderr)
        return EXIT_FAILURE
    if isinstance(exc, MemoryError):
        # the estimate before a run should prevent this; a last line of defence
        print("tdse1d: error: out of memory; see the memory estimate of `tdse1d estimate INPUT`", file=sys.stderr)
        return EXIT_FAILURE
    if isinstance(exc, BrokenPipeError):
        # the reader went away (e.g. `tdse1d export ... | head`): not an error of ours
        import os

        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return EXIT_OK
    if isinstance(exc, OSError):  # a file that cannot be written or read (read-only, full disk...)
        from ..io.guarded_file import describe_os_error

        print(f"tdse1d: error: {describe_os_error(exc, action=None)}", file=sys.stderr)
        return EXIT_FAILURE
    raise exc


def entry_point():  # console script
    sys.exit(main())


if __name__ == "__main__":  # pragma: no cover
    entry_point()
