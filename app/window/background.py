"""Long work off the GUI thread: a job with progress, a cancel flag and a status-bar widget.

A :class:`BackgroundJob` runs ``work(progress, cancelled)`` on Qt's global thread pool. ``work``
calls ``progress(fraction)`` now and then (0..1) and should return early when ``cancelled()`` is
true. The job's signals arrive on the GUI thread: ``progress(float)``, then exactly one of
``finished(object)`` (the result), ``failed(str)`` or ``cancelled()``. A new job for the same pane
simply replaces the old one (cancel it first). :class:`JobStatus` is the progress bar and Cancel
button the window keeps in its status bar for whichever job runs.
"""

from __future__ import annotations

import threading
from typing import Any, Callable

from PySide6 import QtCore, QtWidgets

__all__ = ["BackgroundJob", "JobStatus", "Cancelled"]


class Cancelled(Exception):
    """Raised by work that noticed it was cancelled (optional: returning early is enough)."""


class _Signals(QtCore.QObject):
    progress = QtCore.Signal(float)
    done = QtCore.Signal(object, str, bool)  # result, error text, cancelled


class _Runnable(QtCore.QRunnable):
    def __init__(self, work, signals: _Signals, flag: threading.Event):
        super().__init__()
        self.setAutoDelete(True)
        self._work = work
        self._signals = signals
        self._flag = flag

    def run(self) -> None:
        try:
            result = self._work(self._signals.progress.emit, self._flag.is_set)
        except Cancelled:
            done = (None, "", True)
        except Exception as exc:  # reported, never raised into Qt
            done = (None, f"{type(exc).__name__}: {exc}", False)
        else:
            done = (result, "", self._flag.is_set())
        try:
            self._signals.done.emit(*done)
        except RuntimeError:  # the window (and the signals' object) went while the job ran
            pass


class BackgroundJob(QtCore.QObject):
    """One run of ``work`` on a worker thread.

    Parameters
    ----------
    work : callable
        ``work(progress: Callable[[float], None], cancelled: Callable[[], bool]) -> Any``.
        Runs on a worker thread: it must not touch widgets.
    title : str
        Shown beside the progress bar ("Tolerance spread, 10 000 trials").
    """

    progress = QtCore.Signal(float)
    finished = QtCore.Signal(object)
    failed = QtCore.Signal(str)
    cancelled = QtCore.Signal()

    def __init__(self, work: Callable[[Callable[[float], None], Callable[[], bool]], Any], title: str = "", parent: QtCore.QObject | None = None):
        super().__init__(parent)
        self.title = title
        self._work = work
        self._flag = threading.Event()
        self._signals = _Signals()
        self._signals.progress.connect(self.progress)
        self._signals.done.connect(self._on_done)
        self._running = False

    @property
    def running(self) -> bool:
        return self._running

    def start(self, pool: QtCore.QThreadPool | None = None) -> None:
        """Start the work (once)."""
        if self._running:
            return
        self._running = True
        (pool or QtCore.QThreadPool.globalInstance()).start(_Runnable(self._work, self._signals, self._flag))

    def cancel(self) -> None:
        """Ask the work to stop; ``cancelled`` follows when it has."""
        self._flag.set()

    @property
    def is_cancelled(self) -> bool:
        return self._flag.is_set()

    def _on_done(self, result: object, error: str, was_cancelled: bool) -> None:
        self._running = False
        if was_cancelled:
            self.cancelled.emit()
        elif error:
            self.failed.emit(error)
        else:
            self.finished.emit(result)


class JobStatus(QtWidgets.QWidget):
    """A progress bar with a Cancel button for the running job; hidden while nothing runs."""

    def __init__(self, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("jobStatus")
        self.label = QtWidgets.QLabel(self)
        self.bar = QtWidgets.QProgressBar(self)
        self.bar.setRange(0, 1000)
        self.bar.setMaximumWidth(180)
        self.bar.setTextVisible(False)
        self.cancel_button = QtWidgets.QPushButton("Cancel", self)
        self.cancel_button.setObjectName("cancelJob")
        self.cancel_button.setToolTip("Stop the running computation.")
        lay = QtWidgets.QHBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.addWidget(self.label)
        lay.addWidget(self.bar)
        lay.addWidget(self.cancel_button)
        self.job: BackgroundJob | None = None
        self.cancel_button.clicked.connect(self._on_cancel_clicked)
        self.hide()

    def watch(self, job: BackgroundJob) -> None:
        """Show ``job``'s progress until it ends."""
        self.job = job
        self.label.setText(job.title)
        self.bar.setValue(0)
        job.progress.connect(self._on_progress_changed)
        for sig in (job.finished, job.failed, job.cancelled):
            sig.connect(self._on_job_ended)
        self.show()

    def _on_progress_changed(self, fraction: float) -> None:
        self.bar.setValue(int(1000 * max(0.0, min(1.0, fraction))))

    def _on_cancel_clicked(self) -> None:
        if self.job is not None:
            self.job.cancel()
            self.label.setText(f"{self.job.title}: cancelling…")

    def _on_job_ended(self, *_args) -> None:
        self.job = None
        self.hide()
