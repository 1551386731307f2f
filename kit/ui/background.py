"""A long job of a panel in a background thread: progress bar, cancel button, one outcome.

A panel that runs a whole lot must not hold the kernel for minutes: while the kernel's
main thread executes a cell, it handles no widget message, so neither a cancel button nor
any other control would answer. :class:`BackgroundJob` runs the job in a daemon
``threading.Thread`` instead and returns at once; the kernel stays free for other cells
and for the cancel click, which sets a :class:`threading.Event` the job looks at between
chunks (:func:`kit.io.pool.run_chunks`).

Widget attributes are set from that thread (the progress bar, the count, the finishing
message). ipywidgets sends a changed attribute to the frontend as a comm message on the
kernel's IOPub channel, which ipykernel sends from a thread of its own; the ipywidgets user
guide ("Asynchronous Widgets", updating a widget in the background) shows a progress bar
advanced from a ``threading.Thread`` in the same way. Output printed or displayed from a
thread is another matter (ipykernel 7 routes it by the thread's parent message), so the job
prints nothing: what it has to say goes into widgets.

Warnings raised inside the job are not turned into panel notes here, unlike
:meth:`kit.ui.common.MessageBar.guard`: ``warnings.catch_warnings`` changes the
process-wide filters and is not thread-safe (Python documentation, warnings module).
"""

from __future__ import annotations

import threading
from typing import Any, Callable

from kit.ui.common import classed

#: Bar colours (ipywidgets' bar_style) by state.
STYLES = {"running": "info", "done": "success", "cancelled": "warning", "error": "danger"}


class BackgroundJob:
    """A progress bar, a done/total count and a cancel button for one job at a time.

    Parameters
    ----------
    start_button : ipywidgets.Button, optional
        The panel's button that starts the job: disabled while the job runs.
    prefix : str
        Prefix of the CSS class names (``sb-<prefix>-progress``, ``-count``, ``-cancel``).

    Attributes
    ----------
    widget : ipywidgets.HBox
        The bar, the count and the cancel button.
    progress : ipywidgets.IntProgress
    count : ipywidgets.HTML
        ``done / total``.
    cancel_button : ipywidgets.Button
        Enabled only while a job runs.
    state : str
        "idle", "running", "done", "cancelled" or "error".
    """

    def __init__(self, start_button: Any = None, prefix: str = "job") -> None:
        import ipywidgets as w

        self.start_button = start_button
        self.progress = classed(w.IntProgress(value=0, min=0, max=1,
                                              layout=w.Layout(width="330px")),
                                f"{prefix}-progress")
        self.count = classed(w.HTML(""), f"{prefix}-count")
        self.cancel_button = classed(w.Button(description="Cancel", icon="stop", disabled=True,
                                              tooltip="stop the run; nothing is written"),
                                     f"{prefix}-cancel")
        self.cancel_button.on_click(lambda _b: self.cancel())
        self.widget = w.HBox([self.progress, self.count, self.cancel_button])
        self.state = "idle"
        self._event = threading.Event()
        self._thread: threading.Thread | None = None
        self._lock = threading.Lock()

    # ------------------------------------------------------------------ state
    @property
    def running(self) -> bool:
        """True while a job runs."""
        return self.state == "running"

    def report(self, done: int, total: int) -> None:
        """The ``on_progress(done, total)`` callback: moves the bar and the count."""
        self.progress.max = max(int(total), 1)
        self.progress.value = min(int(done), self.progress.max)
        self.count.value = f"{int(done)} / {int(total)}"

    def cancel(self) -> None:
        """Ask the running job to stop (it stops before its next chunk)."""
        if self.running:
            self._event.set()
            self.cancel_button.disabled = True
            self.count.value += " &middot; stopping&hellip;"

    def wait(self, timeout: float | None = None) -> bool:
        """Wait for the job; True when no job runs any more (False after ``timeout`` [s])."""
        t = self._thread
        if t is not None:
            t.join(timeout)
        return not self.running

    def _set(self, state: str) -> None:
        self.state = state
        busy = state == "running"
        self.cancel_button.disabled = not busy
        if self.start_button is not None:
            self.start_button.disabled = busy
        self.progress.bar_style = STYLES.get(state, "")

    # ------------------------------------------------------------------ running
    def start(self, work: Callable[[Callable[[int, int], None], threading.Event], Any],
              finish: Callable[..., None], block: bool = False) -> Any:
        """Run ``work(on_progress, cancel)``, then ``finish(value=...)`` or ``finish(error=...)``.

        Parameters
        ----------
        work : callable
            The job; gets :meth:`report` as its progress callback and the cancel event.
        finish : callable
            Called once, in the job's thread, with the job's return value or the exception
            it raised (:class:`kit.io.pool.Cancelled` when it was cancelled).
        block : bool
            True runs the job in the calling thread and returns its value (an exception is
            given to ``finish``, then raised again); False starts a daemon thread and
            returns it.

        Returns
        -------
        object or threading.Thread
        """
        from kit.io.pool import Cancelled

        with self._lock:
            if self.running:
                raise RuntimeError("a run is in progress: wait for it to finish or cancel it")
            self._event = threading.Event()
            self.progress.value, self.count.value = 0, ""
            self._set("running")

        def body(reraise: bool) -> Any:
            value, error, state = None, None, "done"
            try:
                value = work(self.report, self._event)
            except BaseException as exc:  # noqa: BLE001 - handed to finish, raised below
                error, state = exc, "cancelled" if isinstance(exc, Cancelled) else "error"
            try:
                if error is None:
                    finish(value=value)
                else:
                    finish(error=error)
            finally:  # the buttons come back even when finish fails
                self._set(state)
            if error is not None and (reraise or not isinstance(error, Exception)):
                raise error
            return value

        if block:
            self._thread = None
            return body(True)
        self._thread = threading.Thread(target=body, args=(False,), daemon=True,
                                        name="sweepbook-panel-run")
        self._thread.start()
        return self._thread
