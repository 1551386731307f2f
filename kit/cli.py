"""The ``sweepbook`` command (also ``python -m kit``).

Sub-commands are registered in :data:`COMMANDS`; each has an ``add_arguments(parser)`` and
a ``run(args) -> int`` function, so that a new command is one small function pair.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Callable

from . import __version__


def _check_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("inputs", nargs="+", help="Touchstone files or folders (folders: every .sNp/.ts file)")
    p.add_argument("--quiet", "-q", action="store_true", help="print errors only")


def _check_run(args: argparse.Namespace) -> int:
    from .folder import touchstone_files
    from .touchstone import check

    files: list[Path] = []
    for item in args.inputs:
        p = Path(item)
        if p.is_dir():
            files.extend(touchstone_files(p))
        else:
            files.append(p)
    n_err = 0
    for path in files:
        findings = check(path)
        errors = [f for f in findings if f.severity == "error"]
        n_err += bool(errors)
        shown = errors if args.quiet else findings
        for f in shown:
            print(str(f))
        if not findings and not args.quiet:
            print(f"{path}: ok")
    print(f"{len(files)} file(s) checked, {n_err} with errors", file=sys.stderr)
    return 1 if n_err else 0


def _demo_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("out", nargs="?", default=None, help="output folder (default: demo_data/)")


def _demo_run(args: argparse.Namespace) -> int:
    from .demo import main as demo_main

    return demo_main([args.out] if args.out else [])


#: name -> (help, add_arguments, run)
COMMANDS: dict[str, tuple[str, Callable, Callable]] = {
    "check": ("pre-flight check of Touchstone files; exit code 1 when any has an error",
              _check_args, _check_run),
    "demo": ("write the demo data set", _demo_args, _demo_run),
}


def register(name: str, help_text: str, add_arguments: Callable, run: Callable) -> None:
    """Add a sub-command (used by modules that bring their own command)."""
    COMMANDS[name] = (help_text, add_arguments, run)


def _load_plugins() -> None:
    # Commands that live with their concept register themselves on import.
    import importlib

    for mod in ("kit.batch",):
        try:
            importlib.import_module(mod)
        except ModuleNotFoundError as exc:
            if exc.name != mod:
                raise


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every registered sub-command."""
    _load_plugins()
    parser = argparse.ArgumentParser(
        prog="sweepbook",
        description="Analyse Touchstone captures of resonators and RF parts.")
    parser.add_argument("--version", action="version", version=f"sweepbook {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, (help_text, add, _) in COMMANDS.items():
        add(sub.add_parser(name, help=help_text, description=help_text))
    return parser


def main(argv: list[str] | None = None) -> int:
    """Entry point; returns the exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not args.command:
        parser.print_help()
        return 2
    return int(COMMANDS[args.command][2](args))
