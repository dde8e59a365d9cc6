"""Where the compiled loops are cached, and telling the user when they are being compiled.

numba caches each compiled loop beside its source (``__pycache__``). In a system-wide install
that folder is not writable by the user running Railwright, and numba then fails with "cannot
cache function ...: no locator available". :func:`choose_cache_folder` runs before numba is
first imported (numba reads ``NUMBA_CACHE_DIR`` on import) and, when the package folder is not
writable, points numba at the user's cache folder (``$XDG_CACHE_HOME/railwright`` or
``~/.cache/railwright``; the system's temporary folder if even that cannot be made).

:class:`CompileWatch` listens to numba's compile events so that the command line can say that the
first run after an install is compiling, and how long it took.
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

__all__ = ["choose_cache_folder", "CompileWatch", "PACKAGE_FOLDER"]

PACKAGE_FOLDER = Path(__file__).resolve().parent.parent


def _can_write(folder: Path) -> bool:
    """Whether files can really be made in ``folder`` (made if missing): tried, not guessed
    from the mode bits, which say nothing of read-only mounts."""
    try:
        folder.mkdir(parents=True, exist_ok=True)
        fd, probe = tempfile.mkstemp(dir=folder, prefix=".write-probe-")
        os.close(fd)
        os.unlink(probe)
        return True
    except OSError:
        return False


def _user_cache_base(environ) -> Path:
    xdg = environ.get("XDG_CACHE_HOME")
    if xdg and os.path.isabs(xdg):
        return Path(xdg)
    return Path(environ.get("HOME") or os.path.expanduser("~")) / ".cache"


def choose_cache_folder(package_folder: Path = PACKAGE_FOLDER, environ=None,
                        can_write=_can_write) -> str | None:
    """Set ``NUMBA_CACHE_DIR`` when the package's own folders cannot hold numba's cache.

    Returns the folder chosen, or None when numba's default (beside the sources) is used or the
    user set ``NUMBA_CACHE_DIR`` themselves.
    """
    environ = os.environ if environ is None else environ
    if environ.get("NUMBA_CACHE_DIR"):
        return None
    if all(can_write(package_folder / sub / "__pycache__")
           for sub in ("physics", "physics/transformer")):
        return None
    candidates = [_user_cache_base(environ) / "railwright" / "numba",
                  Path(tempfile.gettempdir()) / f"railwright-{os.getuid()}" / "numba"]
    for folder in candidates:
        if can_write(folder):
            environ["NUMBA_CACHE_DIR"] = str(folder)
            return str(folder)
    return None


class CompileWatch:
    """Context manager: while it is open, announce the first numba compile on ``stream`` and
    total the compile time (``seconds``; 0 when every loop came from the cache)."""

    def __init__(self, stream=None):
        self.stream = stream if stream is not None else sys.stderr
        self.seconds = 0.0
        self._depth = 0
        self._started = None
        self._stack = None

    def on_start(self, event):
        if self._depth == 0:
            if self._started is None and self.seconds == 0.0:
                print("compiling the simulation's loops for this machine (first run after an "
                      "install; up to a minute, cached for later runs) ...", file=self.stream,
                      flush=True)
            self._started = time.perf_counter()
        self._depth += 1

    def on_end(self, event):
        self._depth -= 1
        if self._depth == 0:
            self.seconds += time.perf_counter() - self._started

    def __enter__(self):
        from contextlib import ExitStack

        from numba.core import event

        listener = self

        class _Listener(event.Listener):
            def on_start(self, ev):
                listener.on_start(ev)

            def on_end(self, ev):
                listener.on_end(ev)

        self._stack = ExitStack()
        self._stack.enter_context(event.install_listener("numba:compile", _Listener()))
        return self

    def __exit__(self, *exc):
        self._stack.close()
        return False

    def summary(self) -> str | None:
        """One line for the user after a run that compiled, else None."""
        if self.seconds <= 0.0:
            return None
        folder = os.environ.get("NUMBA_CACHE_DIR")
        where = f"in {folder}" if folder else "beside the package's sources"
        return f"compiled the loops in {self.seconds:.0f} s (cached {where}; later runs skip this)"
