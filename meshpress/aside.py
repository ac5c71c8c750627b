"""Work done in a second process while this one goes on: a picture, or the carrier's distances.

A short run's time goes mostly to steps that each hold one core: the carrier's
heat-method distances (one solve per vertex, under the GIL) beside its dense
eigen-decomposition, and the report's views beside the bands map.
:func:`start_aside` forks a child that calls ``fn()`` and sends its result
back, so on a machine of two cores such pairs run at the same time.

Only ``fork`` shares the caller's objects without pickling them, so the child
is used only where ``fork`` exists; and a child that draws with OpenGL is
forked only while VTK's renderer is not yet loaded here (a context inherited
through ``fork`` is not safe to use).
Otherwise, or when the child fails for any reason, ``result()`` calls ``fn()``
in this process, so the result and any error it raises are the same either
way.  ``MESHPRESS_SERIAL=1`` keeps everything in this process.
"""

from __future__ import annotations

import multiprocessing as mp
import os
import sys
import threading


class _Job:
    """The result of ``fn()``, computed once: ``result()`` may be called from several threads."""

    def __init__(self, fn):
        self._fn = fn
        self._lock = threading.Lock()
        self._done = False
        self._value = None

    def result(self):
        with self._lock:
            if not self._done:
                self._value, self._done = self._compute(), True
            return self._value

    def _compute(self):
        return self._fn()


class _Child(_Job):
    def __init__(self, fn, ctx):
        super().__init__(fn)
        self._recv, send = ctx.Pipe(duplex=False)
        self._proc = ctx.Process(target=_child_main, args=(fn, send), daemon=True)
        self._proc.start()
        send.close()

    def _compute(self):
        try:
            ok, value = self._recv.recv()
        except (EOFError, OSError):
            ok, value = False, None
        finally:
            self._recv.close()
            self._proc.join()
        return value if ok else self._fn()

    def __del__(self):  # never collected: the child may be blocked on a full pipe
        proc = getattr(self, "_proc", None)
        if proc is not None and proc.is_alive():
            proc.terminate()


def _child_main(fn, send):
    try:
        out = fn()
        send.send((True, out))
    except BaseException:  # the parent does it again and reports the error itself
        try:
            send.send((False, None))
        except BaseException:
            pass
    finally:
        send.close()


def aside_possible(opengl: bool = False) -> bool:
    """Whether :func:`start_aside` would fork a child here and now (for work that draws with OpenGL, or not)."""
    if os.environ.get("MESHPRESS_SERIAL") or "fork" not in mp.get_all_start_methods():
        return False
    return not (opengl and "vtkmodules.vtkRenderingOpenGL2" in sys.modules)


def start_aside(fn, *, opengl: bool = False):
    """Start ``fn()`` in a child process when that is safe; ``.result()`` gives its (picklable) result.

    Parameters
    ----------
    fn : callable
        Takes no arguments; its result must pickle (bytes, arrays).
    opengl : bool
        Whether ``fn`` renders (then it runs here if VTK's renderer is already loaded).

    Returns
    -------
    object with ``result()``
        Blocks until the child is done; calls ``fn()`` here if there was no child or it failed.
    """
    if not aside_possible(opengl):
        return _Job(fn)
    try:
        return _Child(fn, mp.get_context("fork"))
    except OSError:
        return _Job(fn)
