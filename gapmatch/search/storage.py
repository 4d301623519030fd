"""Where a search's trials live: SQLite files, database servers and journal files.

:func:`storage_url` turns what a user typed into an optuna storage address;
:func:`open_storage` opens it (heartbeats and a retry of the trials of dead workers on
database storages, one-line errors for every failure a user can cause), and
:func:`open_study` creates a study exactly once however many processes start together,
while every other process loads it.

Storage kinds:

* a file path (default ``reports/search/studies.db``): SQLite through optuna's RDB
  storage, WAL journal on every connection of this storage only;
* a database URL (``postgresql+psycopg://user@host:5432/db``, ``mysql+pymysql://...``):
  optuna's RDB storage on a server shared by many machines; ``postgresql://`` uses
  psycopg 3 when psycopg2 is not installed (``pip install 'gapmatch[cluster]'``);
* ``journal:PATH``: optuna's journal file storage, for shared file systems without a
  database server;
* ``":memory:"``: nothing kept (one process).
"""

from __future__ import annotations

import contextlib
import contextvars
import importlib.util
import os
import socket
import sqlite3
import time
import warnings
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import optuna

from ..errors import InputError
from .trials import RETRY

__all__ = [
    "DEFAULT_STORAGE",
    "HEARTBEAT_S",
    "GRACE_S",
    "storage_url",
    "open_storage",
    "open_study",
    "shown_url",
    "quiet_optuna",
    "is_journal",
    "uses_heartbeats",
]

#: default storage: an SQLite file under reports/ (relative to the working folder)
DEFAULT_STORAGE = "reports/search/studies.db"
#: heartbeat interval of a running trial on database storages [s]
HEARTBEAT_S = 1
#: a running trial whose heartbeat is older than this is failed and retried [s]
GRACE_S = 6
#: how long a process waits for another one to finish setting up a new study [s]
SETUP_WAIT_S = 60.0
#: attempts at opening a storage while other processes create its tables
OPEN_ATTEMPTS = 6

_JOURNAL = "journal:"


@contextlib.contextmanager
def quiet_optuna() -> Iterator[None]:
    """optuna's log at ERROR level for the duration of a call (restored afterwards),
    and its experimental-feature warnings silenced there."""
    old = optuna.logging.get_verbosity()
    optuna.logging.set_verbosity(optuna.logging.ERROR)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", optuna.exceptions.ExperimentalWarning)
            warnings.simplefilter("ignore", FutureWarning)
            yield
    finally:
        optuna.logging.set_verbosity(old)


def is_journal(url: str | None) -> bool:
    """True for a journal-file storage address (``journal:PATH``)."""
    return url is not None and url.startswith(_JOURNAL)


def uses_heartbeats(url: str | None) -> bool:
    """True for database servers, whose trials are watched by optuna's heartbeats.

    SQLite files and journal files serve processes of one machine (or one shared file
    system): their trials record ``host:pid`` instead, which costs one write per trial
    and no heartbeat thread.
    """
    return url is not None and not is_journal(url) and not url.startswith("sqlite")


def storage_url(storage: str | Path | None) -> str | None:
    """optuna storage address from a user value.

    ``None`` -> the default SQLite file; ``":memory:"`` -> ``None`` (in memory); a path
    -> ``sqlite:///<absolute path>``; ``journal:PATH`` -> ``journal:<absolute path>``;
    anything with ``://`` -> used as given, except that a bare ``postgresql://`` (or
    ``postgres://``) selects psycopg 3 when psycopg2 is missing.
    """
    if storage == ":memory:":
        return None
    if storage is None:
        storage = DEFAULT_STORAGE
    s = str(storage)
    if s.startswith(_JOURNAL):
        p = Path(s[len(_JOURNAL) :]).expanduser().resolve()
        p.parent.mkdir(parents=True, exist_ok=True)
        return f"{_JOURNAL}{p}"
    if "://" in s:
        scheme, rest = s.split("://", 1)
        if scheme in ("postgresql", "postgres"):
            have2 = importlib.util.find_spec("psycopg2") is not None
            have3 = importlib.util.find_spec("psycopg") is not None
            scheme = "postgresql+psycopg" if have3 and not have2 else "postgresql"
        return f"{scheme}://{rest}"
    p = Path(s).expanduser().resolve()
    p.parent.mkdir(parents=True, exist_ok=True)
    return f"sqlite:///{p}"


def shown_url(url: str | None) -> str:
    """A storage address fit for messages: any password replaced by ``***``."""
    if url is None:
        return "memory"
    if "://" not in url or url.startswith("sqlite"):
        return url
    try:
        from sqlalchemy.engine import make_url

        return make_url(url).render_as_string(hide_password=True)
    except Exception:  # noqa: BLE001 - an unparsable URL is shown without its user part
        scheme, _, rest = url.partition("://")
        return f"{scheme}://{rest.rpartition('@')[2]}"


class _SQLiteConnect:
    """Connection factory of one SQLite storage: WAL journal and normal sync on each
    connection (many processes, fewer fsyncs), a 60 s busy timeout. Set per storage, so
    no other SQLAlchemy engine of the process is touched."""

    def __init__(self, path: str) -> None:
        self.path = path

    def __call__(self) -> sqlite3.Connection:
        con = sqlite3.connect(self.path, timeout=60, check_same_thread=False)
        cur = con.cursor()
        cur.execute("PRAGMA journal_mode=WAL")
        cur.execute("PRAGMA synchronous=NORMAL")
        cur.close()
        return con


def _rdb_kwargs(url: str) -> dict[str, Any]:
    if url.startswith("sqlite"):
        path = url.split(":///", 1)[1]
        if Path(path).exists() and Path(path).stat().st_size:
            with open(path, "rb") as fh:
                if fh.read(16) != b"SQLite format 3\x00":
                    raise InputError("storage", "is not an SQLite database file", path)
        return {"creator": _SQLiteConnect(path)}
    kw: dict[str, Any] = {"pool_pre_ping": True}
    if url.startswith("postgresql"):
        kw["connect_args"] = {"connect_timeout": 10}
    return kw


def _driver_error(url: str, exc: BaseException) -> InputError:
    scheme = url.split("://", 1)[0]
    missing = getattr(exc, "name", None) or str(exc)
    hint = (
        "; install it with pip install 'gapmatch[cluster]' (psycopg 3) and use "
        "postgresql+psycopg://..."
        if scheme.startswith("postgres")
        else ""
    )
    return InputError(
        "storage", f"needs the database driver {missing!r}, which is not installed{hint}", scheme
    )


def _connection_error(url: str, exc: BaseException) -> InputError:
    text = str(getattr(exc, "orig", None) or exc).strip().splitlines()
    first = text[0] if text else type(exc).__name__
    return InputError("storage", f"cannot open the database ({first})", shown_url(url))


_OPENED: contextvars.ContextVar[list | None] = contextvars.ContextVar("_OPENED", default=None)


@contextlib.contextmanager
def closing_storages() -> Iterator[None]:
    """Close the database connections of every storage opened inside the block.

    A search opens its storage itself; without this its pooled connections stay open
    until garbage collection, which a notebook or a long test session notices as
    unclosed-connection warnings (and a server as idle sessions).
    """
    token = _OPENED.set([])
    try:
        yield
    finally:
        opened = _OPENED.get() or []
        _OPENED.reset(token)
        for storage in opened:
            close_storage(storage)


def close_storage(storage: Any) -> None:
    """Dispose of the connection pool of a relational storage (others: nothing to do)."""
    if isinstance(storage, optuna.storages.RDBStorage):
        with contextlib.suppress(Exception):  # closing is best effort, never an error
            storage.remove_session()
            storage.engine.dispose()


def open_storage(url: str | None, *, heartbeat: bool | None = None):
    """An optuna storage for an address from :func:`storage_url` (``None``: in memory).

    Database servers (``heartbeat`` default: :func:`uses_heartbeats`) get heartbeats
    (:data:`HEARTBEAT_S`, :data:`GRACE_S`) and
    optuna's :class:`~optuna.storages.RetryFailedTrialCallback`, so the running trial of
    a killed worker is failed and run again by another. Opening is retried while other
    processes create the tables of a new database.

    Raises
    ------
    InputError
        One line for an unparsable URL, an unknown database kind, a missing driver, a
        refused or failed connection, or a file that is not an SQLite database.
    """
    if url is None:
        return None
    if is_journal(url):
        from optuna.storages.journal import JournalFileBackend, JournalStorage

        path = url[len(_JOURNAL) :]
        try:
            return JournalStorage(JournalFileBackend(path))
        except (OSError, ValueError) as exc:
            raise InputError("storage", f"cannot use the journal file ({exc})", path) from None
    import sqlalchemy.exc as sa_exc

    kw = _rdb_kwargs(url)
    extra: dict[str, Any] = {}
    if heartbeat is None:
        heartbeat = uses_heartbeats(url)
    if heartbeat:
        with quiet_optuna():
            retry = RETRY(max_retry=3)
        extra = dict(
            heartbeat_interval=HEARTBEAT_S,
            grace_period=GRACE_S,
            heartbeat_stale_trial_callback=retry,
        )
    last: BaseException | None = None
    for attempt in range(OPEN_ATTEMPTS):
        try:
            with quiet_optuna():
                storage = optuna.storages.RDBStorage(url, engine_kwargs=dict(kw), **extra)
            opened = _OPENED.get()
            if opened is not None:
                opened.append(storage)
            return storage
        except sa_exc.NoSuchModuleError:
            raise InputError(
                "storage",
                "names an unknown database kind; use a file path, journal:PATH, "
                "postgresql+psycopg://... or mysql+pymysql://...",
                url.split("://", 1)[0],
            ) from None
        except (sa_exc.ArgumentError, ValueError):  # unparsable, or e.g. a port not a number
            raise InputError(
                "storage",
                "is not a database URL; give a file path, journal:PATH or a URL such as "
                "postgresql+psycopg://user@host:5432/db",
                shown_url(url),
            ) from None
        except ImportError as exc:
            raise _driver_error(url, exc.__cause__ or exc) from None
        except sa_exc.DatabaseError as exc:
            text = str(exc.orig if getattr(exc, "orig", None) else exc).lower()
            if "file is not a database" in text:
                raise InputError(
                    "storage", "is not an SQLite database file", url.split(":///", 1)[1]
                ) from None
            # tables being created by another process at the same moment: try again
            racing = any(
                w in text
                for w in ("already exists", "duplicate key", "unique constraint", "locked")
            )
            if not racing:
                raise _connection_error(url, exc) from None
            last = exc
            time.sleep(0.2 * (attempt + 1))
    raise _connection_error(url, last) from None


def open_study(
    storage,
    study_name: str,
    *,
    directions: list[str],
    sampler: optuna.samplers.BaseSampler | Callable[[bool], optuna.samplers.BaseSampler],
    setup: Callable[[optuna.Study], None],
    ready_attr: str = "problem",
) -> tuple[optuna.Study, bool]:
    """Create a study exactly once, or load it.

    The process whose ``create_study`` succeeds runs ``setup`` (enqueue the first
    trials, then store the attribute ``ready_attr`` last); every other process loads the
    study and waits until ``ready_attr`` is stored, so seeds are enqueued once however
    many processes start together.

    Parameters
    ----------
    sampler : optuna sampler or callable
        A sampler, or ``f(created) -> sampler``.

    Returns
    -------
    (optuna.Study, bool)
        The study and whether this call created it.
    """
    make = sampler if callable(sampler) else (lambda _created: sampler)
    with quiet_optuna():
        try:
            study = optuna.create_study(
                storage=storage,
                study_name=study_name,
                sampler=make(True),
                directions=directions,
                load_if_exists=False,
            )
        except optuna.exceptions.DuplicatedStudyError:
            pass
        else:
            setup(study)
            return study, True
        study = optuna.load_study(study_name=study_name, storage=storage, sampler=make(False))
    deadline = time.monotonic() + SETUP_WAIT_S
    while ready_attr not in study.user_attrs:
        if time.monotonic() > deadline:
            raise InputError(
                "study_name",
                "names a study whose creating process stopped before setting it up; "
                "use another study name",
                study_name,
            )
        time.sleep(0.2)
    return study, False


def worker_tag() -> str:
    """``host:pid`` of this process (stored on trials of storages without heartbeats)."""
    return f"{socket.gethostname()}:{os.getpid()}"
