"""Text every output shares, and writing a file whole or not at all."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

__all__ = ["CAUTION", "write_text_atomic"]

CAUTION = ("CAUTION: valve amplifier supplies carry lethal voltages and their capacitors hold "
           "charge after switch-off. Fit bleeders, fuse and earth the chassis, and follow local "
           "electrical codes and licensed practice.")


def write_text_atomic(path, text):
    """Write a whole file or nothing: into a temporary file beside it, then rename."""
    target = Path(path)
    fd, tmp = tempfile.mkstemp(dir=target.parent if str(target.parent) else ".",
                               prefix=f".{target.name}.")
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        # mkstemp makes the file private (0600); give it the mode any new file would get
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
