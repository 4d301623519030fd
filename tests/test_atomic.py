"""Atomic file writing (gapmatch.io.atomic); moved here from test_engine.py."""

from __future__ import annotations

import os
import stat

from gapmatch.io.atomic import write_atomic


def test_write_atomic_permissions_and_content(tmp_path):
    p = write_atomic(tmp_path / "sub" / "a.txt", "hello")
    assert p.read_text() == "hello"
    umask = os.umask(0)
    os.umask(umask)
    # same permissions as a plain open() (0666 less the umask), not mkstemp's 0600
    assert stat.S_IMODE(p.stat().st_mode) == 0o666 & ~umask
    assert [x.name for x in p.parent.iterdir()] == ["a.txt"]  # no temporary file left
