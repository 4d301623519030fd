"""Atomic file writing: a temporary file in the target folder, then a rename."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

__all__ = ["write_atomic"]


def write_atomic(path: str | os.PathLike, data: str | bytes, encoding: str = "utf-8") -> Path:
    """Write ``data`` to ``path`` so that readers see either the old file or the whole
    new one, never a part.

    Parameters
    ----------
    path : str or os.PathLike
        Destination; its folder is created if missing.
    data : str or bytes
        Content.
    encoding : str
        Text encoding when ``data`` is a ``str``.

    Returns
    -------
    pathlib.Path
        The destination path.
    """
    dest = Path(path)
    dest.parent.mkdir(parents=True, exist_ok=True)
    raw = data.encode(encoding) if isinstance(data, str) else data
    fd, tmp = tempfile.mkstemp(prefix=f".{dest.name}.", suffix=".tmp", dir=dest.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(raw)
            fh.flush()
            os.fsync(fh.fileno())
        # mkstemp creates the file owner-only; give it the permissions a plain open()
        # would (0666 less the umask)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, dest)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    return dest
