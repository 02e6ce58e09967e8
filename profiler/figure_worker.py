"""A drawing process started early, so that importing matplotlib overlaps the link computation.

Importing matplotlib takes about a quarter of a second and holds the
interpreter lock, so a thread cannot hide it (measured: no gain).  When a
command is asked for a figure, :func:`start` forks a child process at the
beginning of the command; the child imports matplotlib and the sheet
modules on the second core while the parent imports the numerical
packages and computes the report, then draws the figures the parent asks
for with :meth:`FigureWorker.call` and answers with the outcome.

The worker is an optimisation only: without ``os.fork`` (Windows), with
matplotlib already imported (nothing to gain) or with other threads running
(forking a threaded process is unsafe), :func:`start` returns None and the
caller draws in its own process.  The child never touches the parent's
outputs other than the temporary file it is given; :mod:`profiler.outputs`
still renames the files into place only when every output succeeded.
"""

from __future__ import annotations

import contextlib
import importlib
import os
import pickle
import sys
import threading

from .errors import ProfilerError

__all__ = ["FigureWorker", "drawing_process", "start"]

#: Modules the child imports while it waits for work.
PRELOAD = ("matplotlib.figure", "matplotlib.backends.backend_agg", "matplotlib.patheffects",
           "profiler.plot.link")


class FigureWorker:
    """The parent's handle on a forked drawing process (see :func:`start`)."""

    def __init__(self, pid: int, requests, answers):
        self.pid = pid
        self._requests = requests
        self._answers = answers

    def call(self, target: str, *args, **kwargs) -> None:
        """Run ``target`` (``"module:function"``) with the arguments in the child; wait for it.

        Raises
        ------
        ProfilerError
            The child's :class:`ProfilerError` message, or one line if the
            child failed otherwise or died.
        """
        try:
            pickle.dump((target, args, kwargs), self._requests, protocol=pickle.HIGHEST_PROTOCOL)
            self._requests.flush()
            status, message = pickle.load(self._answers)
        except (OSError, EOFError, pickle.PickleError) as exc:
            raise ProfilerError(f"the drawing process stopped unexpectedly ({exc.__class__.__name__})") from None
        if status != "ok":
            raise ProfilerError(message)

    def close(self) -> None:
        """End the child (it exits when its request pipe closes) and reap it."""
        for stream in (self._requests, self._answers):
            try:
                stream.close()
            except OSError:
                pass
        try:
            os.waitpid(self.pid, 0)
        except ChildProcessError:
            pass

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()


def start() -> FigureWorker | None:
    """Fork the drawing process; None where that is not possible or not useful (see the module notes)."""
    if not hasattr(os, "fork") or "matplotlib" in sys.modules or threading.active_count() > 1:
        return None
    request_r, request_w = os.pipe()
    answer_r, answer_w = os.pipe()
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):
            pass
    pid = os.fork()
    if pid == 0:                                    # the child: never returns
        os.close(request_w)
        os.close(answer_r)
        code = 1
        try:
            code = _serve(os.fdopen(request_r, "rb"), os.fdopen(answer_w, "wb"))
        finally:
            os._exit(code)
    os.close(request_r)
    os.close(answer_w)
    return FigureWorker(pid, os.fdopen(request_w, "wb"), os.fdopen(answer_r, "rb"))


@contextlib.contextmanager
def drawing_process(wanted: bool = True):
    """Context manager: a :class:`FigureWorker` (from :func:`start`) or None, closed and reaped at the end.

    ``wanted`` False (no figure asked for) gives None without forking.
    """
    worker = start() if wanted else None
    try:
        yield worker
    finally:
        if worker is not None:
            worker.close()


def _serve(requests, answers) -> int:
    """The child's loop: preload, then run each request until the parent closes the pipe."""
    for name in PRELOAD:
        importlib.import_module(name)
    while True:
        try:
            target, args, kwargs = pickle.load(requests)
        except EOFError:
            return 0
        module, _, function = target.partition(":")
        try:
            getattr(importlib.import_module(module), function)(*args, **kwargs)
            answer = ("ok", "")
        except ProfilerError as exc:
            answer = ("error", str(exc))
        except Exception as exc:  # noqa: BLE001 - reported to the parent as one line
            answer = ("error", f"drawing failed: {exc.__class__.__name__}: {exc}")
        pickle.dump(answer, answers)
        answers.flush()
