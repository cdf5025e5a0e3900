"""Run Qt drawing on the GUI thread when the caller is a worker thread (a report written in the background).

Widgets may only be made and painted on the thread of the ``QApplication``. A function wrapped by
:func:`on_gui_thread` runs directly when called on that thread (or when no Qt application runs);
called from another thread, it is handed to the GUI thread's event loop and the caller waits for
its result (or its exception). The GUI thread must be running its event loop meanwhile, which it
is while a :class:`~bandsmith.app.window.background.BackgroundJob` runs.
"""

from __future__ import annotations

import functools
import threading
from typing import Any, Callable, TypeVar

__all__ = ["on_gui_thread"]

F = TypeVar("F", bound=Callable[..., Any])

_lock = threading.Lock()
_caller = None


class _Call:
    def __init__(self, fn, args, kwargs):
        self.fn, self.args, self.kwargs = fn, args, kwargs
        self.done = threading.Event()
        self.value: Any = None
        self.error: BaseException | None = None

    def run(self) -> None:
        try:
            self.value = self.fn(*self.args, **self.kwargs)
        except BaseException as exc:  # handed back to the waiting thread
            self.error = exc
        finally:
            self.done.set()


def _gui_caller(app):
    global _caller
    from PySide6 import QtCore

    with _lock:
        if _caller is None:

            class Caller(QtCore.QObject):
                call = QtCore.Signal(object)

                def __init__(self):
                    super().__init__()
                    self.call.connect(self.run_call, QtCore.Qt.ConnectionType.QueuedConnection)

                @QtCore.Slot(object)
                def run_call(self, box: _Call) -> None:
                    box.run()

            caller = Caller()
            if caller.thread() != app.thread():
                caller.moveToThread(app.thread())
            _caller = caller
    return _caller


def on_gui_thread(fn: F) -> F:
    """Decorate a function that draws with Qt so that it always runs on the GUI thread."""

    @functools.wraps(fn)
    def wrapper(*args, **kwargs):
        from PySide6 import QtCore

        app = QtCore.QCoreApplication.instance()
        if app is None or QtCore.QThread.currentThread() == app.thread():
            return fn(*args, **kwargs)
        box = _Call(fn, args, kwargs)
        _gui_caller(app).call.emit(box)
        # Wait, but not past the application's end: a window closed while a report is drawn
        # must not leave this thread waiting for an event loop that is gone (Qt waits for the
        # thread pool when the application object goes).
        while not box.done.wait(0.1):
            if QtCore.QCoreApplication.closingDown() or QtCore.QCoreApplication.instance() is None:
                raise RuntimeError("the application closed before the drawing was done")
        if box.error is not None:
            raise box.error
        return box.value

    return wrapper  # type: ignore[return-value]
