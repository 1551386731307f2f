"""Batch runs of a procedure: in this process, in local worker processes, or on Dask.

Every capture goes through the same steps (:func:`process_one`): import (through the
cache of parsed captures when one is given), the correction chain, the characteristic
frequencies, the fit. A step that fails gives a :class:`kit.outputs.entries.Failure`
record (step, reason, path, line) in place of its result; the summary shows it as an error
row (import, correction) or in the step's flags (resonance, fit), and the run goes on.
The per-capture results are joined into the lot summary by :func:`kit.summary` (with the
procedure's limits), exactly as in a notebook, so a local and a distributed run give
identical tables.
"""

from __future__ import annotations

import base64
import hashlib
import sys
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterable

import numpy as np

from kit._version import __version__
from kit.batch.lot_store import Deferred
from kit.batch.procedure import Procedure, ProcedureError, problems_text
from kit.batch.validate import Checked
from kit.capture import Capture, CaptureError
from kit.outputs.entries import Failure
from kit.outputs.part_figure import FIGURE_CHOICES

#: Captures per task sent to a worker (amortises process start-up and the chain build).
CHUNK = 16

# Per-process memo of built correction chains, keyed by the procedure's digest: standards
# are read once per worker, not once per capture.
_CHAINS: dict[str, Any] = {}
_LIMITS: dict[str, Any] = {}
_CACHES: dict[str, Any] = {}
#: Version of the stored per-capture results (resonance and fit dicts, failures, pictures,
#: traces); a new version keys new cache entries, so results stored by an older kit are not
#: misread.
RESULTS_SCHEMA = 3
#: The ``figures`` settings (one list, :data:`kit.outputs.part_figure.FIGURE_CHOICES`).
FIGURES = FIGURE_CHOICES


@dataclass
class BatchResult:
    """What a batch run produced.

    Attributes
    ----------
    summary : pandas.DataFrame
        One row per input (error rows included), from :func:`kit.summary`.
    captures : list
        Capture, or CaptureError for inputs that could not be read or corrected.
    corrected : list
        Corrected Capture per input (None where not corrected or failed).
    fits, resonances : list
        Plain result dicts per input; a :class:`kit.outputs.entries.Failure` where the
        step failed, None where it was not run.
    pictures : dict
        sha256 -> PNG bytes of the parts that got a picture (drawn in the workers,
        :func:`kit.outputs.part_figure.needs_figure`).
    traces : dict
        sha256 -> (f_hz, y), the decimated main curve of every analysed part.
    stats : dict
        Counts (inputs, errors, cache hits, ...), the engine used, the procedure digest and
        ``lot_store`` ("hit", "miss", "rebuilt", or None when not used).

    Notes
    -----
    After a whole-lot hit (:mod:`kit.batch.lot_store`) ``captures`` and ``corrected`` are
    :class:`kit.batch.lot_store.Deferred`: the captures are loaded (from the cache) and
    corrected on first access only; :meth:`write` does not access them.
    """

    summary: Any
    captures: list = field(default_factory=list)
    corrected: list = field(default_factory=list)
    fits: list = field(default_factory=list)
    resonances: list = field(default_factory=list)
    stats: dict = field(default_factory=dict)
    procedure: Procedure | None = None
    pictures: dict = field(default_factory=dict)
    traces: dict = field(default_factory=dict)
    lot: Any = field(default=None, repr=False)  # the lot store's record, when one was used

    def write(self, out_dir: str | Path, report: bool = True, review_log: Any = None,
              figures: str = "flagged") -> Path:
        """Write summary/sweeps (Parquet and CSV), provenance.json and report.html to ``out_dir``.

        ``review_log`` (a :class:`kit.ReviewLog`, a path or a ``postgresql://`` URL) adds the
        review columns to the summary, its events to the export and the history to the report.
        ``figures`` ("flagged", "all", "none") chooses the parts pictured in the report; the
        pictures drawn by the run are used, the parent draws only those the run did not.
        After a whole-lot hit the sweeps files come from the lot record, not the captures.
        """
        from kit.outputs.handover import StoredOutputError, export
        from kit.outputs.summary import with_review
        from kit.review.log import as_review_log

        review_log = as_review_log(review_log)
        summ = self.summary if review_log is None else with_review(self.summary, review_log)
        settings = {"procedure": self.procedure.to_dict() if self.procedure else None,
                    "procedure_source": getattr(self.procedure, "source", None),
                    "run": self.stats}
        keep = self.stats.get("keep_captures", True)
        stored = self.lot.export_part() if self.lot is not None and keep else None
        out = None
        if stored is not None:
            try:
                out = export(out_dir, [], summary=summ, settings=settings,
                             review_log=review_log, stored=stored)
            except StoredOutputError as exc:
                self.lot.drop_export_part(str(exc))
        if out is None:
            corrected = [c for c in self.corrected if c is not None]
            out = export(out_dir, self.captures, summary=summ, settings=settings,
                         corrected=corrected or None, review_log=review_log)
            if self.lot is not None and keep:
                self.lot.save_export(Path(out))
        if report:
            _write_report(self, Path(out) / "report.html", summ, review_log, figures)
        return Path(out)


def _write_report(res: BatchResult, out: Path, summ: Any, review_log: Any, figures: str) -> None:
    """report.html from the run's pictures and traces; captures only where pictures lack."""
    from kit.outputs.lot_report import report as write_report

    limits = res.procedure.limits_object() if res.procedure else None
    ran = res.stats.get("figures", "flagged")
    lazy = isinstance(res.captures, Deferred) and not res.captures.loaded
    # the report needs the captures only for pictures the run did not draw
    need = not (ran == figures or figures == "none" or (ran == "all" and figures == "flagged"))
    caps = _as_analysed(res) if need or not lazy else []
    write_report(out, caps, summary=summ, review_log=review_log, limits=limits,
                 figures=figures, pictures=res.pictures, traces=res.traces)


def _as_analysed(res: BatchResult) -> list:
    """The captures as analysed: the corrected one where the procedure corrects."""
    pairs = (zip(res.captures, res.corrected) if len(res.corrected) == len(res.captures)
             else ((c, None) for c in res.captures))
    return [cor if isinstance(cor, Capture) else c for c, cor in pairs if isinstance(c, Capture)]


# ---------------------------------------------------------------------- one capture
def _chain_for(proc: Procedure, digest: str):
    if digest not in _CHAINS:
        try:
            _CHAINS[digest] = ("ok", proc.build_corrections())
        except CaptureError as exc:
            _CHAINS[digest] = ("error", str(exc))
    return _CHAINS[digest]


def _cache_for(cache_dir: str):
    """This process's cache object for a folder (one per worker, not one per capture)."""
    if cache_dir not in _CACHES:
        from kit.io.cache import CaptureCache

        _CACHES[cache_dir] = CaptureCache(cache_dir)
    return _CACHES[cache_dir]


def _result_key(digest: str) -> str:
    """Cache key of the stored results: procedure digest, kit version and
    :data:`RESULTS_SCHEMA`. Not the figures setting: it decides only which parts get a
    picture, and a picture a stored record lacks is drawn when asked for (:func:`_figures`)."""
    text = f"{digest}:kit-{__version__}:results-{RESULTS_SCHEMA}"
    return hashlib.sha256(text.encode()).hexdigest()


def _stored(d: Any, step: str) -> Any:
    """A stored result back: a failure's dict becomes its Failure record again."""
    if isinstance(d, dict) and d.get("ok") is False and d.get("step") == step and \
            set(d) <= {"step", "reason", "path", "line", "ok"}:
        return Failure.from_dict(d)
    return d


def _to_store(v: Any) -> Any:
    return v.to_dict() if isinstance(v, Failure) else v


def process_one(item: Any, proc: Procedure, digest: str, cache_dir: str | None,
                keep_captures: bool = True, figures: str = "flagged") -> dict[str, Any]:
    """Run the procedure on one input (a path or a Capture); never raises for bad data.

    Returns a dict with ``capture`` (Capture, or a :class:`kit.outputs.entries.Failure`
    of the import or correction step), ``corrected``, ``resonance`` and ``fit`` (plain
    dicts, a Failure, or None), ``cache`` ("hit", "miss", "rebuilt" or None) and ``row``,
    the input's summary row (:func:`kit.outputs.summary.summary_rows`, with the procedure's
    limits), built here so that workers share that work too. With ``keep_captures=False``
    the captures are dropped once the row is made (large runs); failures are kept.

    ``picture`` is the PNG of the part when :func:`kit.outputs.part_figure.needs_figure`
    asks for one under ``figures`` (else None), ``trace`` its decimated main curve (None
    without a capture); both are drawn here, in the worker, by this process's
    :class:`kit.outputs.part_figure.PartPainter`, and cached with the results.
    """
    from kit.outputs.summary import summary_rows

    out = _analyse(item, proc, digest, cache_dir)
    if digest not in _LIMITS:
        _LIMITS[digest] = proc.limits_object()
    # the row (masks, corrections, correction state) describes the capture as analysed: the
    # corrected one when the procedure corrects, as the same procedure in a notebook would
    judged = out["corrected"] if isinstance(out["corrected"], Capture) else out["capture"]
    out["row"] = summary_rows([judged], fits=[out["fit"]],
                              resonances=[out["resonance"]], limits=_LIMITS[digest])[0]
    drew = _figures(out, judged, figures, _LIMITS[digest])
    store = out.pop("_store", None)  # the cache, when in use
    if store is not None and (out.get("result_cache") != "hit" or drew):
        pic, trace = out["picture"], out["trace"]
        store.put_result(out["capture"].sha256, _result_key(digest), {
            "resonance": _to_store(out["resonance"]), "fit": _to_store(out["fit"]),
            "picture": None if pic is None else base64.b64encode(pic).decode("ascii"),
            "trace": None if trace is None else [np.asarray(a, float).tolist() for a in trace]})
    if not keep_captures:
        if not isinstance(out["capture"], Failure):
            out["capture"] = None
        out["corrected"] = None
    return out


def _figures(out: dict[str, Any], judged: Any, figures: str, limits: Any) -> bool:
    """The part's trace, and its picture when the rule asks for one: from the stored
    results where they hold it, else drawn in this process. True when a picture was drawn
    (the stored record then gains it)."""
    from kit.outputs.part_figure import PartPainter, figure_png, needs_figure

    done = out.pop("_done", None) or {}
    out["picture"] = out["trace"] = None
    if done.get("trace") is not None:
        out["trace"] = tuple(np.asarray(a) for a in done["trace"])
    elif isinstance(judged, Capture):
        out["trace"] = PartPainter.trace(judged)
    if not needs_figure(out["row"], figures):
        return False
    if done.get("picture") is not None:
        out["picture"] = base64.b64decode(done["picture"])
        return False
    if not isinstance(judged, Capture):
        return False
    fit, res = out["fit"], out["resonance"]
    out["picture"] = figure_png(judged, limits, fit=fit if isinstance(fit, dict) else None,
                                resonance=res if isinstance(res, dict) else None)
    return True


def _analyse(item: Any, proc: Procedure, digest: str, cache_dir: str | None) -> dict[str, Any]:
    from kit.io.touchstone import load

    out: dict[str, Any] = {"capture": None, "corrected": None, "resonance": None, "fit": None,
                           "cache": None}
    pattern = proc.import_.get("name_pattern")
    try:
        if isinstance(item, Capture):
            cap = item
        elif cache_dir is not None:
            cap, out["cache"] = _cache_for(cache_dir).load(item, pattern)
        else:
            cap = load(item, pattern)
    except Exception as exc:  # noqa: BLE001 - one input never stops the run
        out["capture"] = Failure.of("import", exc, path=item)
        return out
    out["capture"] = cap
    store = None
    if cache_dir is not None and not isinstance(item, Capture) and cap.sha256:
        store = _cache_for(cache_dir)
        done = store.get_result(cap.sha256, _result_key(digest))
    else:
        done = None
    status, chain = _chain_for(proc, digest)
    if status == "error":
        failed = Failure("correction", f"correction could not be set up: {chain}",
                         None if cap.path is None else str(cap.path))
        out["capture"] = out["resonance"] = out["fit"] = failed
        return out
    work = cap
    if chain is not None:
        try:
            work = chain(cap)
            out["corrected"] = work
        except Exception as exc:  # noqa: BLE001
            msg = f"correction failed: {exc.reason if isinstance(exc, CaptureError) else exc}"
            out["capture"] = Failure("correction", msg, None if cap.path is None else str(cap.path))
            return out
    if done is not None:  # same bytes, same procedure: the analysis is not repeated
        out["resonance"] = _stored(done["resonance"], "resonance")
        out["fit"] = _stored(done["fit"], "fit")
        out["result_cache"] = "hit"
        out["_done"] = done
        out["_store"] = store
        return out
    method = proc.import_.get("method", "reflection")
    port = int(proc.import_.get("port", 1))
    span = proc.resonance.get("span_hz") or (proc.fit or {}).get("span_hz")
    try:
        from kit.resonators.frequencies import resonance

        out["resonance"] = resonance(work, span_hz=span, method=method, port=port).to_dict()
    except Exception as exc:  # noqa: BLE001
        out["resonance"] = Failure.of("resonance", exc)
    if proc.fit:
        try:
            from kit.resonators.fitting import fit

            opts = dict(proc.fit)
            res = fit(work, method=method, port=port, keep_data=False, **opts)
            out["fit"] = res.to_dict()
        except Exception as exc:  # noqa: BLE001
            out["fit"] = Failure.of("fit", exc)
    out["_store"] = store  # the results are stored with the figures, by process_one
    return out


def _process_chunk(items: list, proc_doc: dict, base_dir: str, source: str | None,
                   digest: str, cache_dir: str | None, keep_captures: bool = True,
                   figures: str = "flagged", one_thread: bool = False) -> list[dict[str, Any]]:
    # run() checked the procedure before any chunk was sent: nothing is checked or read again
    proc = Procedure.of_checked(proc_doc, base_dir=base_dir, source=source or "<procedure>")
    if not one_thread:
        return [process_one(it, proc, digest, cache_dir, keep_captures, figures) for it in items]
    # In a worker process the BLAS library must not start threads of its own: with one
    # worker per core they only compete (measured here: 2 workers went from 1.5x to 1.8x).
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1):
        return [process_one(it, proc, digest, cache_dir, keep_captures, figures) for it in items]


# ---------------------------------------------------------------------- inputs
def expand_inputs(inputs: Iterable[Any]) -> list[Any]:
    """Files, folders (their Touchstone files, sorted) and Captures, in the order given."""
    from kit.io.folder import touchstone_files

    out: list[Any] = []
    if isinstance(inputs, (str, Path, Capture)):
        inputs = [inputs]
    for item in inputs:
        if isinstance(item, Capture):
            out.append(item)
            continue
        p = Path(item)
        if not p.exists():
            raise ProcedureError(f"input {p} does not exist: give Touchstone files or folders "
                                 "that exist (paths are relative to the current folder)")
        if p.is_dir():
            out.extend(str(x) for x in touchstone_files(p))
        else:
            out.append(str(p))
    return out


# ---------------------------------------------------------------------- the run
def run(procedure: Procedure | str | Path, inputs: Any, *, workers: int | None = None,
        client: Any = None, scheduler: str | None = None, cache_dir: str | Path | None = None,
        use_cache: bool = True, progress: bool | None = None,
        keep_captures: bool = True, figures: str = "flagged", on_progress: Any = None,
        cancel: Any = None) -> BatchResult:
    """Run a procedure over many captures.

    Parameters
    ----------
    procedure : Procedure, path or kit.batch.validate.Checked
        The pipeline (see :mod:`kit.batch.procedure`); a :class:`~kit.batch.validate.Checked`
        that passed is used as the validator read and built it (nothing is read or built
        again in this process).
    inputs : path, folder, Capture or an iterable of them
    workers : int, optional
        Local worker processes; default: the usable CPUs (:mod:`kit.io.pool`). ``1`` runs
        in this process.
    client : dask.distributed.Client, optional
        Run on this Dask cluster instead of local processes.
    scheduler : str, optional
        Address of a Dask scheduler (``tcp://host:8786``); a client is made for it.
    cache_dir : path, optional
        Cache of parsed captures, results and whole lots (default: the user's cache folder).
    use_cache : bool
        ``False`` parses and analyses every file (and uses no lot record).
    progress : bool, optional
        Progress bar; default: only when standard error is a terminal.
    keep_captures : bool
        Keep every capture (raw and corrected) in the result, as exports of sweeps and
        reports need. ``False`` keeps only the summary rows: memory then stays flat for
        lots of any size (the summary and the provenance can still be written).
    figures : str
        Which parts get a picture, drawn in the workers: "flagged" (not passed or flagged),
        "all" or "none" (:func:`kit.outputs.part_figure.needs_figure`).
    on_progress : callable, optional
        ``on_progress(done, total)`` in captures, called in this process as chunks finish
        (:func:`kit.io.pool.run_chunks`).
    cancel : threading.Event or alike, optional
        Once set (``is_set()``), the run stops and raises :class:`kit.io.pool.Cancelled`.

    Returns
    -------
    BatchResult

    Raises
    ------
    kit.io.pool.Cancelled
        When ``cancel`` was set before the run finished; nothing is returned.

    Notes
    -----
    With the cache in use and only files as inputs, the whole lot is looked up first in the
    lot store (:mod:`kit.batch.lot_store`): an unchanged lot under the same procedure, kit
    and figures setting is not analysed again (``stats["lot_store"] == "hit"``).
    """
    from kit.outputs.summary import summary_frame

    built = None
    if isinstance(procedure, Checked):  # read, checked and built by the validator: used as is
        if procedure.problems or procedure.procedure is None:
            raise ProcedureError(problems_text(procedure.problems or []) or "the procedure "
                                 "did not pass kit.batch.validate.check")
        proc, built = procedure.procedure, ("ok", procedure.corrections)
    elif isinstance(procedure, Procedure):
        # a Procedure made in Python is refused what its file would be (workers read it so)
        Procedure.from_dict(procedure.to_dict(), base_dir=procedure.base_dir,
                            source=procedure.source or "<procedure>")
        proc = procedure
    else:
        proc = Procedure.from_file(procedure)
    items = expand_inputs(inputs)
    if not items:
        raise ProcedureError("no inputs: give Touchstone files or folders that hold some")
    if figures not in FIGURES:
        raise ProcedureError(f"figures={figures!r}: give one of {', '.join(FIGURES)}")
    digest = proc.digest()
    if built is not None:  # this process analyses with the chain already built
        _CHAINS.setdefault(digest, built)
    cdir = None
    if use_cache:
        from kit.io.cache import default_cache_dir

        cdir = str(Path(cache_dir) if cache_dir is not None else default_cache_dir())
    lot = _lot_lookup(cdir, items, digest, figures)
    if lot.get("record") is not None:
        return _from_record(lot, proc, items, digest, cdir, keep_captures)
    show = sys.stderr.isatty() if progress is None else progress
    bar = None
    chunks = [items[i: i + CHUNK] for i in range(0, len(items), CHUNK)]
    args = (proc.to_dict(), str(proc.base_dir), proc.source, digest, cdir, keep_captures, figures)
    results: list[dict[str, Any]] = []
    engine = "this process"
    own_client = None
    try:
        if scheduler is not None and client is None:
            from dask.distributed import Client

            client = own_client = Client(scheduler)
        if client is not None:
            from dask.distributed import as_completed

            engine = f"dask ({client.scheduler.address})"
            if show:
                from tqdm.auto import tqdm

                bar = tqdm(total=len(items), desc="captures", unit="capture")
            futures = client.map(_process_chunk, chunks, *[[a] * len(chunks) for a in args],
                                 [True] * len(chunks), pure=False)
            size = {fut.key: len(chunk) for fut, chunk in zip(futures, chunks)}
            done = 0
            for fut in as_completed(futures):
                if cancel is not None and cancel.is_set():
                    from kit.io.pool import Cancelled

                    client.cancel(futures)
                    raise Cancelled(done, len(items))
                done += size[fut.key]
                if bar is not None:
                    bar.update(size[fut.key])
                if on_progress is not None:
                    on_progress(done, len(items))
            for part in client.gather(futures):
                results.extend(part)
        else:
            # local processes through the kit's one pool policy (kit.io.pool): worker count,
            # start method, one BLAS thread per worker, results in input order
            from kit.io.pool import default_workers, run_chunks

            n = workers or default_workers(len(chunks))
            engine = f"{n} local processes" if n > 1 and len(items) > CHUNK else "this process"
            results = run_chunks(_process_chunk, items, *args, workers=n, chunk_size=CHUNK,
                                 parallel_from=CHUNK + 1, progress=show, desc="captures",
                                 unit="capture", on_progress=on_progress, cancel=cancel)
    finally:
        if bar is not None:
            bar.close()
        if own_client is not None:
            own_client.close()
    captures, corrected, fits, resonances, rows = [], [], [], [], []
    pictures, traces, failures = {}, {}, []
    cache_counts = {"hit": 0, "miss": 0, "rebuilt": 0, "results_reused": 0}
    for k, r in enumerate(results):
        c = r["capture"]
        if isinstance(c, Failure):
            captures.append(c.error())
            failures.append([k, c.to_dict()])
        elif c is not None:
            captures.append(c)
        sha = r["row"].get("sha256")
        if r.get("picture") is not None:
            pictures[sha] = r["picture"]
        if r.get("trace") is not None:
            traces[sha] = r["trace"]
        if keep_captures:
            corrected.append(r["corrected"])
        fits.append(r["fit"])
        resonances.append(r["resonance"])
        rows.append(r["row"])
        if r["cache"]:
            cache_counts[r["cache"]] += 1
        cache_counts["results_reused"] += r.get("result_cache") == "hit"
    summ = summary_frame(rows)
    stats = {"inputs": len(items), "errors": int((summ["status"] == "error").sum()),
             "engine": engine, "procedure_sha256": digest, "cache_dir": cdir, **cache_counts,
             "figures": figures, "keep_captures": keep_captures,
             "lot_store": lot.get("status"), "lot_key": lot.get("key")}
    record = None
    if lot.get("key"):
        try:
            record = lot["store"].put(lot["key"], summary=summ, fits=[_to_store(f) for f in fits],
                                      resonances=[_to_store(r) for r in resonances],
                                      failures=failures, pictures=pictures, traces=traces,
                                      stats=stats)
        except (OSError, TypeError, ValueError) as exc:  # the run stands without its record
            import warnings

            from kit.batch.lot_store import LotStoreWarning

            warnings.warn(f"the lot could not be stored in {cdir} ({type(exc).__name__}: {exc}); "
                          "a re-run will analyse it again", LotStoreWarning, stacklevel=2)
    return BatchResult(summary=summ, captures=captures, corrected=corrected, fits=fits,
                       resonances=resonances, stats=stats, procedure=proc, pictures=pictures,
                       traces=traces, lot=record)


# ---------------------------------------------------------------------- whole lots
def _lot_lookup(cdir: str | None, items: list, digest: str, figures: str) -> dict[str, Any]:
    """Hash the input files and look the lot up; {} when the lot store is not used."""
    if cdir is None or not all(isinstance(it, str) for it in items):
        return {}
    from kit.batch.lot_store import LotStore, file_sha256, lot_key

    try:
        shas = [file_sha256(it) for it in items]
    except CaptureError:  # an unreadable file: the run reports it as an error row
        return {}
    store = LotStore(cdir)
    key = lot_key(items, shas, digest, figures, RESULTS_SCHEMA)
    record, status = store.get(key)
    return {"store": store, "key": key, "record": record, "status": status}


def _from_record(lot: dict[str, Any], proc: Procedure, items: list, digest: str,
                 cdir: str | None, keep_captures: bool) -> BatchResult:
    """The BatchResult of a whole-lot hit: nothing analysed, captures loaded on first use."""
    rec = lot["record"]
    doc = rec.doc
    pictures, traces = rec.figures()
    stats = {**doc["stats"], "engine": "lot store (nothing analysed)", "hit": 0, "miss": 0,
             "rebuilt": 0, "results_reused": 0, "lot_store": "hit", "lot_key": lot["key"],
             "keep_captures": keep_captures, "cache_dir": cdir}
    fits = [_stored(f, "fit") for f in doc["fits"]]
    resonances = [_stored(r, "resonance") for r in doc["resonances"]]
    if keep_captures:
        def load() -> dict[str, list]:
            # import and correct only: the rows, traces and pictures come from the record
            outs = [_analyse(it, proc, digest, cdir) for it in items]
            return {"captures": [o["capture"].error() if isinstance(o["capture"], Failure)
                                 else o["capture"] for o in outs],
                    "corrected": [o["corrected"] for o in outs]}

        memo: dict = {}
        captures: Any = Deferred(load, "captures", len(items), memo)
        corrected: Any = Deferred(load, "corrected", len(items), memo)
    else:
        captures = [Failure.from_dict(d).error() for _, d in doc["failures"]]
        corrected = []
    return BatchResult(summary=rec.summary(), captures=captures, corrected=corrected, fits=fits,
                       resonances=resonances, stats=stats, procedure=proc, pictures=pictures,
                       traces=traces, lot=rec)
