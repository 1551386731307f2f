"""The ``sweepbook`` command (also ``python -m kit``).

Sub-commands are listed in :data:`COMMANDS`; each has an ``add_arguments(parser)`` and
a ``run(args) -> int`` function, so that a new command is one small function pair. This module
sits at the top of the batch stage: it imports the stages below it, never the other way round.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Callable

from kit._version import __version__


def _check_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("inputs", nargs="+", help="Touchstone files or folders (folders: every .sNp/.ts file)")
    p.add_argument("--quiet", "-q", action="store_true", help="print errors only")


def _check_run(args: argparse.Namespace) -> int:
    from kit.io.folder import touchstone_files
    from kit.io.touchstone import check

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
    from kit.batch.demo import main as demo_main

    return demo_main([args.out] if args.out else [])


def _run_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("procedure", help="procedure file (TOML)")
    p.add_argument("inputs", nargs="+", help="Touchstone files or folders")
    p.add_argument("--out", required=True, help="output folder (created; a previous export is replaced)")
    p.add_argument("--workers", type=int, default=None, help="local worker processes (default: cores)")
    p.add_argument("--scheduler", default=None, help="Dask scheduler address, e.g. tcp://host:8786")
    p.add_argument("--cache", default=None, help="cache folder for parsed captures (default: user cache)")
    p.add_argument("--no-cache", action="store_true", help="parse every file, use no cache")
    p.add_argument("--no-report", action="store_true", help="skip report.html")
    p.add_argument("--summary-only", action="store_true",
                   help="keep no captures in memory (very large lots): writes the summary and "
                        "provenance, an empty sweeps table and no report")
    p.add_argument("--review-log", default=None, metavar="URL_OR_PATH",
                   help="review log to join: a review.sqlite file or a postgresql:// URL "
                        "(password from PGPASSWORD or ~/.pgpass)")


def _run_cmd(args: argparse.Namespace) -> int:
    from kit.batch.engine import run
    from kit.capture import CaptureError

    try:
        result = run(args.procedure, args.inputs, workers=args.workers, scheduler=args.scheduler,
                     cache_dir=args.cache, use_cache=not args.no_cache,
                     keep_captures=not args.summary_only)
        out = result.write(args.out, report=not (args.no_report or args.summary_only),
                           review_log=args.review_log)
    except (CaptureError, ValueError, OSError) as exc:
        print(f"sweepbook run: {exc}", file=sys.stderr)
        return 2
    s = result.stats
    verdicts = result.summary["verdict"].value_counts(dropna=True).to_dict()
    print(f"{s['inputs']} capture(s), {s['errors']} error row(s), engine: {s['engine']}, "
          f"cache hits {s['hit']}; verdicts {verdicts or 'none'}; written to {out}")
    if s["errors"]:
        # a run with captures that could not be analysed must not look like a clean one
        rows = result.summary[result.summary["status"] == "error"]
        for name, err in list(zip(rows["capture"], rows["error"]))[:5]:
            print(f"sweepbook run: {name}: {err}", file=sys.stderr)
        more = len(rows) - 5
        print(f"sweepbook run: {s['errors']} capture(s) could not be analysed"
              + (f" ({more} more in summary.csv)" if more > 0 else "") + "; exit code 1",
              file=sys.stderr)
        return 1
    return 0


def _review_args(p: argparse.ArgumentParser) -> None:
    sub = p.add_subparsers(dest="action", metavar="ACTION", required=True)
    a = sub.add_parser("push", help="send a folder's review.sqlite (or a log file) to the server")
    a.add_argument("local", metavar="FOLDER_OR_FILE")
    a.add_argument("url", metavar="URL")
    a = sub.add_parser("pull", help="bring the server's events into a folder's review.sqlite")
    a.add_argument("url", metavar="URL")
    a.add_argument("local", metavar="FOLDER_OR_FILE")
    a = sub.add_parser("status", help="parts without a verdict, parts to retest, who decided what")
    a.add_argument("log", metavar="URL_OR_PATH")
    a.add_argument("--lot", default=None, help="only parts whose file lies in a folder of this name")
    a = sub.add_parser("init", help="create the review log on the server (run once, as the "
                                    "database owner)")
    a.add_argument("url", metavar="URL")
    a.add_argument("--writer", default=None, metavar="ROLE",
                   help="role the reviewers write with: gets SELECT and INSERT only")


def _review_cmd(args: argparse.Namespace) -> int:
    from kit.review import sync
    from kit.review.log import ReviewLogError

    try:
        if args.action == "push":
            print(sync.push(args.local, args.url))
        elif args.action == "pull":
            print(sync.pull(args.url, args.local))
        elif args.action == "status":
            print(sync.status_text(sync.status(args.log, lot=args.lot)))
        else:
            from kit.review.server import init_server, safe_url

            version = init_server(args.url, writer=args.writer)
            print(f"{safe_url(args.url)}: review log ready (schema version {version})")
    except (ReviewLogError, OSError) as exc:
        print(f"sweepbook review {args.action}: {exc}", file=sys.stderr)
        return 2
    return 0


#: name -> (help, add_arguments, run)
COMMANDS: dict[str, tuple[str, Callable, Callable]] = {
    "check": ("pre-flight check of Touchstone files; exit code 1 when any has an error",
              _check_args, _check_run),
    "demo": ("write the demo data set", _demo_args, _demo_run),
    "run": ("run a procedure over captures; writes summary, sweeps, provenance, report",
            _run_args, _run_cmd),
    "review": ("share the review log: push, pull, status, init (a postgresql:// server)",
               _review_args, _review_cmd),
}


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every registered sub-command."""
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
