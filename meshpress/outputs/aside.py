"""Draw one picture in a second process while this one draws the rest.

The report's pictures are most of a short run's time, and a picture drawn by
VTK or matplotlib holds one core.  :func:`start_aside` forks a child that calls
``fn()`` and sends back its bytes, so on a machine of two cores the importance
map and the report's own views render at the same time.

Only ``fork`` shares the caller's objects without pickling them, and forking a
process that already holds an OpenGL context is not safe; so the child is used
only where ``fork`` exists and VTK is not yet loaded here.  Otherwise, or when
the child fails for any reason, ``result()`` calls ``fn()`` in this process,
so the picture and any error it raises are the same either way.
"""

from __future__ import annotations

import multiprocessing as mp
import os
import sys


class _Inline:
    def __init__(self, fn):
        self._fn = fn

    def result(self):
        return self._fn()


class _Child:
    def __init__(self, fn, ctx):
        self._fn = fn
        self._recv, send = ctx.Pipe(duplex=False)
        self._proc = ctx.Process(target=_child_main, args=(fn, send), daemon=True)
        self._proc.start()
        send.close()

    def result(self):
        try:
            ok, value = self._recv.recv()
        except (EOFError, OSError):
            ok, value = False, None
        finally:
            self._recv.close()
            self._proc.join()
        return value if ok else self._fn()


def _child_main(fn, send):
    try:
        out = fn()
        send.send((isinstance(out, (bytes, bytearray)), out if isinstance(out, (bytes, bytearray)) else None))
    except BaseException:  # the parent draws it again and reports the error itself
        send.send((False, None))
    finally:
        send.close()


def start_aside(fn):
    """Start ``fn()`` (returning bytes) in a child process when that is safe; ``.result()`` gives its bytes.

    Set ``MESHPRESS_SERIAL=1`` to draw everything in this process.
    """
    if (os.environ.get("MESHPRESS_SERIAL") or "fork" not in mp.get_all_start_methods()
            or "vtkmodules.vtkRenderingOpenGL2" in sys.modules):
        return _Inline(fn)
    try:
        return _Child(fn, mp.get_context("fork"))
    except OSError:
        return _Inline(fn)
