"""Sweeps on a Dask cluster: chunks of stacks out, results back in order.

Large sweeps (maps, yield maps, roadmap draws) are embarrassingly parallel over stacks. This
module sends them to a `dask.distributed` cluster instead of a home-made scheduler:

- :func:`connect` opens a client from a cluster address: ``"local:N"`` starts a
  :class:`distributed.LocalCluster` with ``N`` single-threaded worker processes on this
  machine; ``"tcp://HOST:PORT"`` (or ``"tls://..."``) joins an existing scheduler; a
  :class:`distributed.Client` is used as it is.
- :func:`map_chunks` calls one function on every chunk, with the large shared inputs
  (spectra, hourly photon tables) scattered to the workers once, and returns the results in
  chunk order, so a sweep's output does not depend on which worker finished first. The
  computation of each chunk is the same as in one process, so results are bit-identical.

Dask is an optional dependency (``pip install 'gapmatch[cluster]'``); this module imports
it only when called.

References
----------
.. [1] Dask Development Team, *Dask: Library for dynamic task scheduling* (2016),
   https://dask.org — the ``distributed`` scheduler's ``Client.scatter`` / ``Client.map``
   / ``as_completed`` interface used here.
"""

from __future__ import annotations

import contextlib
import re
from collections.abc import Callable, Iterator, Sequence
from typing import Any

from .errors import InputError

__all__ = ["connect", "map_chunks", "parse_cluster", "MAX_LOCAL_WORKERS"]

#: largest worker count accepted for ``local:N`` (a sanity bound, not a hardware limit)
MAX_LOCAL_WORKERS = 256
_ADDRESS = re.compile(r"(tcp|tls|ucx|inproc)://[^\s/]+(:\d+)?")


def parse_cluster(spec: str) -> tuple[str, int | str]:
    """Check a cluster address and say what it means.

    Parameters
    ----------
    spec : str
        ``"local:N"`` (N worker processes on this machine, 1 <= N <= 256) or a scheduler
        address ``"tcp://HOST:PORT"``.

    Returns
    -------
    tuple
        ``("local", N)`` or ``("address", spec)``.

    Raises
    ------
    InputError
        For anything else, naming the two accepted forms.
    """
    s = str(spec).strip()
    m = re.fullmatch(r"local:(\d+)", s)
    if m:
        n = int(m.group(1))
        if not 1 <= n <= MAX_LOCAL_WORKERS:
            raise InputError("cluster", f"local:N needs 1 <= N <= {MAX_LOCAL_WORKERS}", s)
        return "local", n
    if _ADDRESS.fullmatch(s):
        return "address", s
    raise InputError(
        "cluster",
        "must be local:N (N worker processes here) or a scheduler address tcp://HOST:PORT",
        s,
    )


def _import_distributed():
    try:
        import distributed
    except ImportError:  # pragma: no cover - depends on the installation
        raise InputError(
            "cluster",
            "needs dask.distributed; install it with: pip install 'gapmatch[cluster]'",
        ) from None
    return distributed


@contextlib.contextmanager
def connect(cluster: Any, *, timeout_s: float = 30.0) -> Iterator[Any]:
    """Open a Dask client for a sweep, and close what this call opened.

    Parameters
    ----------
    cluster : str or distributed.Client or None
        ``"local:N"``, ``"tcp://HOST:PORT"``, an existing client (used, not closed), or
        ``None`` (yields ``None``: run in this process).
    timeout_s : float
        How long to wait for a remote scheduler [s].

    Yields
    ------
    distributed.Client or None
    """
    if cluster is None:
        yield None
        return
    distributed = _import_distributed()
    if isinstance(cluster, distributed.Client):
        yield cluster
        return
    kind, value = parse_cluster(cluster)
    if kind == "local":
        # one thread per worker process: the engine's numpy kernels parallelise inside
        # a process already, and a fixed layout keeps runs comparable
        with (
            distributed.LocalCluster(
                n_workers=int(value),
                threads_per_worker=1,
                processes=True,
                dashboard_address=":0",  # any free port, never a fixed one
                host="127.0.0.1",
            ) as lc,
            distributed.Client(lc) as client,
        ):
            yield client
        return
    try:
        client = distributed.Client(value, timeout=timeout_s)
    except (OSError, TimeoutError) as exc:
        raise InputError("cluster", f"cannot reach the scheduler ({exc})", value) from None
    try:
        yield client
    finally:
        client.close()


def map_chunks(
    fn: Callable[..., Any],
    chunks: Sequence[Any],
    *,
    client: Any = None,
    shared: dict[str, Any] | None = None,
    progress: bool = False,
    desc: str = "chunks",
) -> list[Any]:
    """Apply ``fn(chunk, **shared)`` to every chunk, on a cluster or here, in order.

    Parameters
    ----------
    fn : callable
        A module-level (picklable) function of one chunk and the shared keyword inputs.
    chunks : sequence
        The work units (e.g. row blocks of a gap grid).
    client : distributed.Client, optional
        Where to run; ``None`` runs the chunks one after another in this process.
    shared : dict, optional
        Large inputs every chunk needs; scattered to every worker once (broadcast), not
        sent with each task.
    progress : bool
        Show a progress bar (tqdm) as chunks finish.
    desc : str
        Label of the progress bar.

    Returns
    -------
    list
        ``fn``'s results, in the order of ``chunks`` whatever order they finished in.
    """
    shared = dict(shared or {})
    bar = None
    if progress:
        from tqdm import tqdm

        bar = tqdm(total=len(chunks), desc=desc, unit="chunk", leave=False)
    try:
        if client is None:
            out = []
            for c in chunks:
                out.append(fn(c, **shared))
                if bar is not None:
                    bar.update(1)
            return out
        distributed = _import_distributed()
        # hash=False: a fresh key per call, so releasing an earlier call's copy of the same
        # object cannot cancel this one; each value wrapped in a one-item list, so a dict,
        # list or tuple (or an empty one) is scattered as one object, not item by item
        remote = {k: client.scatter([v], broadcast=True, hash=False)[0] for k, v in shared.items()}
        # pure=False: every chunk is its own task even if two chunks compare equal
        futures = client.map(fn, list(chunks), pure=False, **remote)
        index = {f.key: i for i, f in enumerate(futures)}
        results: list[Any] = [None] * len(futures)
        for fut in distributed.as_completed(futures):
            results[index[fut.key]] = fut.result()
            if bar is not None:
                bar.update(1)
        return results
    finally:
        if bar is not None:
            bar.close()
