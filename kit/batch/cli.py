"""The ``sweepbook`` command (also ``python -m kit``).

Sub-commands are listed in :data:`COMMANDS`; each has an ``add_arguments(parser)`` and
a ``run(args) -> int`` function, so that a new command is one small function pair. This module
sits at the top of the batch stage: it imports the stages below it, never the other way round.
"""

from __future__ import annotations

import argparse
import contextlib
import signal
import sys
import threading
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


def _check_procedure_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("procedure", help="procedure file (TOML, docs/procedure.md)")
    p.add_argument("inputs", nargs="*", help="captures the procedure is for (files or folders): "
                   "they must exist, and the spans must overlap the frequencies of a sample of "
                   "them (read by the pre-flight scan)")


def _check_procedure_run(args: argparse.Namespace) -> int:
    from kit.batch.validate import validate

    problems = validate(args.procedure, args.inputs or None)
    for p in problems:
        print(str(p))
    if problems:
        print(f"{len(problems)} problem(s); exit code 2", file=sys.stderr)
        return 2
    checked = " (spans checked against the inputs)" if args.inputs else ""
    print(f"{args.procedure}: ok{checked}")
    return 0


#: Exit code of a run stopped by Ctrl-C (SIGINT): 128 + the signal's number, as shells report
#: a process ended by a signal (common practice, no source).
INTERRUPTED = 130

#: Parts listed after a run that did not pass (the rest: summary.csv).
SHOWN_PARTS = 20


def not_passed(summary, limit: int = SHOWN_PARTS) -> list[str]:
    """Lines of a compact table of the parts that did not pass: capture, verdict, first reason.

    A part did not pass when it is an error row, or when limits judged it "fail" or
    "incomplete". At most ``limit`` parts, then "N more in summary.csv".
    """
    rows = []
    for _, r in summary.iterrows():
        if r.get("status") == "error":
            rows.append((str(r["capture"]), "error", str(r.get("error") or "")))
        elif r.get("verdict") in ("fail", "incomplete"):
            rows.append((str(r["capture"]), str(r["verdict"]),
                         str(r.get("verdict_reasons") or "").split("; ")[0]))
    if not rows:
        return []
    width = min(max(len(c) for c, _, _ in rows[:limit]), 28)
    out = [f"{'capture':<{width}}  {'verdict':<10}  first reason"]
    for cap, verdict, why in rows[:limit]:
        why = why if len(why) <= 100 else why[:99] + "…"
        out.append(f"{cap[:width]:<{width}}  {verdict:<10}  {why}")
    if len(rows) > limit:
        out.append(f"{len(rows) - limit} more in summary.csv")
    return out


def _out_in_inputs(out: str, inputs: list[str]) -> str | None:
    """Why ``--out`` may not be used: it is an input folder or inside one (None when fine).

    A folder given as input, or holding an input file, is never written to, nor any folder
    in it (the rule of :func:`kit.io.writer.refuse_input_folder`).
    """
    from kit.io.writer import input_folder_holding

    for item in inputs:
        p = Path(item)
        if p.is_dir() and input_folder_holding(out, [p]):
            return f"--out {out} is inside the input folder {item}"
        if p.is_file() and input_folder_holding(out, [p.parent]):
            return f"--out {out} is the folder of the input {item}, or inside it"
    return None


def _run_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("procedure", help="procedure file (TOML, docs/procedure.md)")
    p.add_argument("inputs", nargs="+", help="Touchstone files or folders")
    p.add_argument("--out", required=True, help="output folder (created; a previous export is "
                   "replaced; never an input folder or a folder inside one)")
    p.add_argument("--workers", type=int, default=None, help="local worker processes (default: cores)")
    p.add_argument("--scheduler", default=None, help="Dask scheduler address, e.g. tcp://host:8786")
    p.add_argument("--cache", default=None, help="cache folder for parsed captures (default: user cache)")
    p.add_argument("--no-cache", action="store_true", help="parse every file, use no cache")
    p.add_argument("--no-report", action="store_true", help="skip report.html")
    p.add_argument("--figures", choices=("flagged", "all", "none"), default="flagged",
                   help="figures in the report: for parts that did not pass or carry a flag "
                        "(default), for every part, or none")
    p.add_argument("--summary-only", action="store_true",
                   help="keep no captures in memory (very large lots): writes the summary and "
                        "provenance, an empty sweeps table and no report")
    p.add_argument("--review-log", default=None, metavar="URL_OR_PATH",
                   help="review log to join: a review.sqlite file or a postgresql:// URL "
                        "(password from PGPASSWORD or ~/.pgpass)")


@contextlib.contextmanager
def _ctrl_c_stops(stop: threading.Event):
    """While inside, a first Ctrl-C (SIGINT) sets ``stop`` (the run ends after the captures
    in hand, :class:`kit.io.pool.Cancelled`) instead of raising at a random point of the
    analysis; a second one raises KeyboardInterrupt at once. Outside the main thread (no
    signal handler can be set there) Ctrl-C keeps Python's behaviour."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def on_sigint(signum, frame):
        if stop.is_set():
            raise KeyboardInterrupt
        stop.set()
        print("sweepbook run: stopping after the captures in hand (Ctrl-C again: at once)",
              file=sys.stderr)

    before = signal.signal(signal.SIGINT, on_sigint)
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, before)


def _run_cmd(args: argparse.Namespace) -> int:
    from kit.batch.engine import run
    from kit.batch.validate import check
    from kit.capture import CaptureError
    from kit.io.pool import Cancelled

    # an invalid procedure or output folder is refused before any capture is analysed; what
    # the check read and built (procedure, corrections, listed inputs) is what runs
    checked = check(args.procedure, args.inputs)
    problems = checked.problems
    for p in problems:
        print(f"sweepbook run: {p}", file=sys.stderr)
    why = _out_in_inputs(args.out, args.inputs)
    if why:
        print(f"sweepbook run: {why}: raw captures are evidence and their folders are never "
              "written to; choose an output folder outside the inputs", file=sys.stderr)
    if problems or why:
        n = len(problems) + bool(why)
        print(f"sweepbook run: {n} problem(s); nothing was run; exit code 2", file=sys.stderr)
        return 2
    with_report = not (args.no_report or args.summary_only)
    figures = args.figures if with_report else "none"  # no picture that no report shows
    stage, stop = "run", threading.Event()
    try:
        with _ctrl_c_stops(stop):
            result = run(checked, checked.inputs, workers=args.workers,
                         scheduler=args.scheduler, cache_dir=args.cache,
                         use_cache=not args.no_cache, keep_captures=not args.summary_only,
                         figures=figures, cancel=stop)
        stage = "write"
        out = result.write(args.out, report=with_report, review_log=args.review_log,
                           figures=figures)
    except (CaptureError, ValueError, OSError) as exc:
        print(f"sweepbook run: {exc}", file=sys.stderr)
        return 2
    except (Cancelled, KeyboardInterrupt) as exc:
        # the worker processes are ended by the pool (kit.io.pool); an export is built beside
        # --out and renamed into place, so --out holds the previous export or none, whole
        done = (f" after {exc.done} of {exc.total} capture(s)"
                if isinstance(exc, Cancelled) else "")
        where = ("nothing was written to" if stage == "run" else
                 "the export was written whole or not at all; report.html may be missing in")
        print(f"sweepbook run: interrupted{done}; {where} {args.out}; run the same command "
              f"again to finish; exit code {INTERRUPTED}", file=sys.stderr)
        return INTERRUPTED
    s = result.stats
    verdicts = result.summary["verdict"].value_counts(dropna=True).to_dict()
    print(f"{s['inputs']} capture(s), {s['errors']} error row(s), engine: {s['engine']}, "
          f"cache hits {s['hit']}; verdicts {verdicts or 'none'}; written to {out}")
    table = not_passed(result.summary)
    if table:
        print("\nparts that did not pass:")
        print("\n".join(table))
    if s["errors"]:
        # a run with captures that could not be analysed must not look like a clean one
        rows = result.summary[result.summary["status"] == "error"]
        for name, err in list(zip(rows["capture"], rows["error"]))[:5]:
            print(f"sweepbook run: {name}: {err}", file=sys.stderr)
        more = len(rows) - 5
        code = 3 if s["errors"] == s["inputs"] else 1
        print(f"sweepbook run: {s['errors']} capture(s) could not be analysed"
              + (f" ({more} more in summary.csv)" if more > 0 else "")
              + ("; not one capture was analysed" if code == 3 else "")
              + f"; exit code {code}", file=sys.stderr)
        return code
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
    "check-procedure": ("list every problem of a procedure (and its spans against captures); "
                        "exit code 2 when any", _check_procedure_args, _check_procedure_run),
    "run": ("run a procedure over captures; writes summary, sweeps, provenance, report; exit "
            "code 1 when some captures are errors, 3 when all are, 2 when it cannot run, "
            "130 when interrupted (Ctrl-C)",
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
