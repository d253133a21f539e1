"""The ``viscometry`` command line.

Subcommands are discovered as modules of :mod:`viscometry.commands` (sorted by name). Each
module defines ``NAME`` (the subcommand), ``HELP`` (one line), ``add_arguments(parser)``
and ``run(args) -> int`` (the exit code). Errors the package raises on purpose
(:class:`~viscometry.errors.ViscometryError`) are printed as one line,
``viscometry: error: <message>``, on standard error with exit code 2; ``--debug`` prints the
traceback as well. The line is escaped and cut to a readable length
(:func:`viscometry.text.message_line`). A budget's warnings are part of each command's output (``warning:``
lines, or the ``warnings`` list of the JSON); a Python warning of the package raised while a
command runs (none is expected) would be printed as ``viscometry: warning: <message>`` on
standard error.

Output is safe for any terminal: every user-supplied text (titles, file names, candidate
names) is put on one line with control, bidirectional and zero-width characters escaped
where it is printed, and while a command runs standard output and standard error escape any
such character that is left (tab and newline excepted). A stream that cannot encode a
character (an ASCII or Latin-1 terminal, the C locale) gets an ASCII spelling instead of
an error: ``±`` as ``+/-``, ``°`` as ``deg``, ``∞`` as ``inf``, ``η`` as ``eta``
(:func:`viscometry.text.ascii_fallback`). The streams are restored when :func:`main` returns.
"""

from __future__ import annotations

import argparse
import codecs
import contextlib
import importlib
import os
import pkgutil
import sys
import traceback
import warnings
from collections.abc import Iterator, Sequence
from types import ModuleType
from typing import Any, TextIO

__all__ = ["build_parser", "discover_commands", "main"]

PROG = "viscometry"
_REQUIRED = ("NAME", "HELP", "add_arguments", "run")


def discover_commands() -> tuple[list[ModuleType], list[str]]:
    """Import the subcommand modules of :mod:`viscometry.commands`, sorted by module name.

    Returns
    -------
    modules : list of module
        Modules that define ``NAME``, ``HELP``, ``add_arguments`` and ``run``.
    problems : list of str
        One line per module that could not be imported or lacks the interface (shown in
        ``--help`` so a broken command does not take the others down).
    """
    import viscometry.commands as package

    modules: list[ModuleType] = []
    problems: list[str] = []
    for info in sorted(pkgutil.iter_modules(package.__path__), key=lambda i: i.name):
        if info.name.startswith("_"):
            continue
        try:
            module = importlib.import_module(f"{package.__name__}.{info.name}")
        except Exception as exc:  # a broken command must not break the others
            problems.append(f"{info.name}: cannot be imported ({type(exc).__name__}: {exc})")
            continue
        missing = [a for a in _REQUIRED if not hasattr(module, a)]
        if missing:
            problems.append(f"{info.name}: not a command (missing {', '.join(missing)})")
            continue
        modules.append(module)
    return modules, problems


class _VersionAction(argparse.Action):
    """``--version``: print ``viscometry X.Y.Z`` on standard output and exit 0. The version is
    read from the package's metadata only when asked (``importlib.metadata`` costs start-up
    time that ``--help`` and every command would otherwise pay)."""

    def __init__(self, option_strings: Sequence[str], dest: str = argparse.SUPPRESS,
                 default: Any = argparse.SUPPRESS, help: str | None = None) -> None:  # fmt: skip
        super().__init__(option_strings, dest, nargs=0, default=default, help=help)

    def __call__(self, parser: argparse.ArgumentParser, *_args: Any, **_kwargs: Any) -> None:
        from viscometry import __version__

        print(f"{PROG} {__version__}")
        parser.exit()


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with one subparser per discovered command."""
    modules, problems = discover_commands()
    epilog = (
        "Run 'viscometry COMMAND --help' for the options of a command. Exit codes: 0 success, "
        "1 an audit found a difference, 2 an error (bad file, bad option)."
    )
    if problems:
        epilog += " Unavailable commands: " + "; ".join(problems)
    parser = argparse.ArgumentParser(
        prog=PROG,
        description=(
            "GUM uncertainty budgets for capillary viscometry: evaluate plain-text budget "
            "files, audit recorded results, plan upgrades, check the budget against the lab's "
            "own records, and extrapolate dilute polymer solutions."
        ),
        epilog=epilog,
    )
    parser.add_argument(
        "--version", action=_VersionAction, help="show program's version number and exit"
    )
    parser.add_argument(
        "--debug", action="store_true", help="on an error, print the full traceback as well"
    )
    # Also accept --debug after the subcommand, without overriding an earlier one.
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument(
        "--debug", action="store_true", default=argparse.SUPPRESS,
        help="on an error, print the full traceback as well",
    )  # fmt: skip
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", title="commands")
    for module in modules:
        p = sub.add_parser(
            module.NAME, help=module.HELP, description=module.HELP, parents=[common],
            formatter_class=argparse.RawDescriptionHelpFormatter,
        )  # fmt: skip
        module.add_arguments(p)
        p.set_defaults(_run=module.run)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code.

    Parameters
    ----------
    argv : sequence of str, optional
        Arguments without the program name (default: ``sys.argv[1:]``).

    Returns
    -------
    int
        0 success; 1 an audit found a difference; 2 an error.
    """
    with _safe_streams():
        return _main(argv)


def _main(argv: Sequence[str] | None) -> int:
    from viscometry.errors import ViscometryError, ViscometryWarning
    from viscometry.text import message_line

    parser = build_parser()
    try:
        args = parser.parse_args(list(argv) if argv is not None else None)
    except SystemExit as exc:  # --help, --version, usage errors
        return exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 2)
    run = getattr(args, "_run", None)
    if run is None:
        parser.print_help(sys.stderr)
        return 2
    debug = bool(getattr(args, "debug", False))
    if os.environ.get("VISCOMETRY_CACHE", "").strip():  # the compiled-model cache is opt-in
        from viscometry.cache import install_store

        install_store()
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ViscometryWarning)
        try:
            code = int(run(args))
        except ViscometryError as exc:
            if debug:
                traceback.print_exc()
            _report(caught, ViscometryWarning)
            print(f"{PROG}: error: {message_line(str(exc))}", file=sys.stderr)
            return 2
        except KeyboardInterrupt:
            print(f"{PROG}: interrupted", file=sys.stderr)
            return 130
        except BrokenPipeError:  # output piped into e.g. `head`, which closed early
            _silence_stdout()
            return 1
        except Exception as exc:
            if debug:
                traceback.print_exc()
            _report(caught, ViscometryWarning)
            print(
                f"{PROG}: error: unexpected {type(exc).__name__}: {message_line(str(exc))} "
                f"(run with --debug for the traceback)",
                file=sys.stderr,
            )
            return 2
    _report(caught, ViscometryWarning)
    return code


def _report(caught: list[warnings.WarningMessage], category: type[Warning]) -> None:
    from viscometry.text import message_line

    seen: set[str] = set()
    for w in caught:
        text = message_line(str(w.message))
        if text in seen:
            continue
        seen.add(text)
        if issubclass(w.category, category):
            print(f"{PROG}: warning: {text}", file=sys.stderr)
        else:  # not ours: hand it back to the normal machinery
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)


def _silence_stdout() -> None:
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):  # pragma: no cover - captured streams
        pass


class _EscapingStream:
    """A text stream that escapes control, bidirectional and zero-width characters (all but
    tab and newline) before writing them to ``stream``; everything else is passed on."""

    def __init__(self, stream: TextIO) -> None:
        self._stream = stream

    def write(self, text: str) -> int:
        from viscometry.text import escape_controls

        return self._stream.write(escape_controls(text))

    def writelines(self, lines: Any) -> None:
        for line in lines:
            self.write(line)

    def __getattr__(self, name: str) -> Any:
        return getattr(self._stream, name)


@contextlib.contextmanager
def _safe_streams() -> Iterator[None]:
    """Standard output and error escaped and, where they cannot encode a character, spelt
    in ASCII (:func:`viscometry.text.ascii_fallback`) while a command runs; restored after."""
    from viscometry.text import ASCII_FALLBACK, ascii_fallback

    codecs.register_error(ASCII_FALLBACK, ascii_fallback)
    saved: list[tuple[str, Any, str | None]] = []
    for name in ("stdout", "stderr"):
        stream = getattr(sys, name)
        if stream is None:
            continue
        errors = getattr(stream, "errors", None)
        try:
            stream.reconfigure(errors=ASCII_FALLBACK)
        except (AttributeError, ValueError, OSError, TypeError):  # not a reconfigurable stream
            errors = None
        saved.append((name, stream, errors))
        setattr(sys, name, _EscapingStream(stream))
    try:
        yield
    finally:
        for name, stream, errors in saved:
            current = getattr(sys, name)
            if isinstance(current, _EscapingStream) and current._stream is stream:
                setattr(sys, name, stream)
            if errors is not None:
                with contextlib.suppress(AttributeError, ValueError, OSError, TypeError):
                    stream.reconfigure(errors=errors)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
