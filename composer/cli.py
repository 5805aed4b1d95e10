"""The ``rowcast`` command line: a thin ``main()`` over library objects.

Each subcommand lives in its own module exposing ``configure(parser)`` and ``run(args) -> int``;
this file only lists them. Errors that are values (:class:`~composer.errors.RowcastError`) become one
line on stderr and their exit status (2 bad input, 3 device or link); nothing prints a traceback.

Exit codes: 0 ok, 1 the check found violations, 2 bad input or usage, 3 device or link error, 70 an
internal error (a bug in rowcast: one line on stderr, never a traceback, and never confused with 1).
"""
from __future__ import annotations

import argparse
import importlib
import sys

from . import __version__
from .errors import EXIT_INPUT, EXIT_INTERNAL, RowcastError, escape_text

__all__ = ["main", "COMMANDS"]

# name -> (module, one-line help)
COMMANDS: dict[str, tuple[str, str]] = {
    "edit": ("composer.tui.command", "open a pattern in the terminal composer"),
    "check": ("composer.commands.check", "compute every frame's currents and flag what is over a limit"),
    "design": ("composer.commands.design", "choose column resistors for a target LED current"),
    "spice": ("composer.commands.spice", "write a SPICE netlist of one row of one frame"),
    "export": ("composer.commands.export", "write C tables, a GIF/PNG preview or JSON"),
    "import": ("composer.commands.import_image", "turn an image or GIF into a pattern"),
    "text": ("composer.commands.text", "make a scrolling-text pattern"),
    "bringup": ("composer.commands.bringup", "make a wiring test pattern for a new panel"),
    "stream": ("transport.commands.stream", "play a pattern on a receiver over a serial link"),
    "ports": ("transport.commands.ports", "list serial ports with descriptions and USB VID:PID"),
    "sim": ("transport.commands.sim", "start the receiver firmware in the AVR simulator"),
    "profiles": ("composer.commands.profiles", "list the bundled hardware profiles"),
    "demos": ("composer.commands.demos", "list the bundled demo patterns (a name works wherever a pattern file does)"),
    "profile": ("composer.commands.profile_show", "show one resolved, validated profile"),
}

EPILOG = ("exit status: 0 ok, 1 the check found violations, 2 bad input or usage, 3 device or link error, "
          f"{EXIT_INTERNAL} internal error")


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors in one line with exit status 2."""

    def error(self, message: str) -> None:  # type: ignore[override]
        sys.stderr.write(f"{self.prog}: {message} (see {self.prog} --help)\n")
        raise SystemExit(EXIT_INPUT)


def build_parser(only: str | None = None) -> argparse.ArgumentParser:
    """The full parser; with ``only``, just that subcommand's options are loaded (faster start-up)."""
    parser = _Parser(prog="rowcast", description="Compose, check, stream and export animations for "
                     "multiplexed two-colour LED dot-matrix panels.", epilog=EPILOG)
    parser.add_argument("--version", action="version", version=f"rowcast {__version__}")
    subs = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name, (module_name, help_text) in COMMANDS.items():
        sub = subs.add_parser(name, help=help_text, description=help_text, epilog=EPILOG)
        sub.set_defaults(_module=module_name)
        if only is not None and name != only:
            continue
        module = importlib.import_module(module_name)
        module.configure(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    try:
        if not argv:
            return _default()
        parser = build_parser(argv[0] if argv[0] in COMMANDS else None)
        args, extra = parser.parse_known_args(argv)
        if extra:       # name the subcommand whose usage the user got wrong, as its own errors do
            prog = f"rowcast {args.command}" if args.command else "rowcast"
            sys.stderr.write(f"{prog}: unrecognized arguments: {escape_text(' '.join(extra), 200)} "
                             f"(see {prog} --help)\n")
            return EXIT_INPUT
        if args.command is None:
            parser.print_help()
            return EXIT_INPUT
        module = importlib.import_module(args._module)
        return int(module.run(args) or 0)
    except RowcastError as err:
        sys.stderr.write(f"rowcast: {err}\n")
        return err.exit_code
    except KeyboardInterrupt:
        sys.stderr.write("rowcast: interrupted\n")
        return 130
    except BrokenPipeError:
        return 0
    except MemoryError:
        sys.stderr.write(f"rowcast: out of memory (exit status {EXIT_INTERNAL})\n")
        return EXIT_INTERNAL
    except Exception as exc:  # noqa: BLE001 - the last line of defence: one line, its own status
        where = _innermost(exc)
        sys.stderr.write(f"rowcast: internal error: {type(exc).__name__}: {escape_text(str(exc), 200)}{where} "
                         f"(a bug in rowcast; please report it with the command and files)\n")
        return EXIT_INTERNAL


def _innermost(exc: BaseException) -> str:
    """' at module.py:123' for the deepest frame, so a report names where it broke without a traceback."""
    tb = exc.__traceback__
    while tb is not None and tb.tb_next is not None:
        tb = tb.tb_next
    if tb is None:
        return ""
    code = tb.tb_frame.f_code
    return f" at {code.co_filename.rsplit('/', 1)[-1]}:{tb.tb_lineno}"


def _default() -> int:
    """No arguments: the composer on the bundled demo with the simulated receiver as preview."""
    from .tui.command import run_demo
    return run_demo()


if __name__ == "__main__":
    raise SystemExit(main())
