"""Atomic file writing: a temporary file in the target folder, then a rename."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

__all__ = ["check_writable", "write_atomic"]


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


def check_writable(path: str | os.PathLike, field: str) -> Path:
    """Check, before any work, that a file can be written at ``path``: its folder is
    created if missing and a temporary file is made there and removed again.

    Parameters
    ----------
    path : str or os.PathLike
        Destination file.
    field : str
        Option or key that named it, for the message.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    InputError
        When the file could not be written.
    """
    from ..errors import InputError

    p = Path(path)
    if p.is_dir():
        raise InputError(field, "is a folder; give a file name", str(p))
    try:
        p.parent.mkdir(parents=True, exist_ok=True)
        with tempfile.NamedTemporaryFile(dir=p.parent, prefix=f".{p.name}.", suffix=".check"):
            pass
    except OSError as exc:
        raise InputError(field, f"cannot be written ({exc.strerror})", str(p)) from None
    return p
