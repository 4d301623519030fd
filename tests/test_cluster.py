"""Sweeps on a real Dask cluster (a LocalCluster of two worker processes on 127.0.0.1).

The check is against the single-process run of the same engine: a sweep split into chunks
and computed on other processes must give bit-identical numbers in the same order.
"""

from __future__ import annotations

import os

import numpy as np
import pytest

from gapmatch import cluster
from gapmatch.core.engine import solve_stacks
from gapmatch.errors import InputError
from gapmatch.io.spectra import standard_spectrum
from gapmatch.units import EV

if os.environ.get("CI") == "true":
    import distributed  # noqa: F401 - under CI a missing cluster library is a failure
else:
    distributed = pytest.importorskip("distributed")

pytestmark = pytest.mark.cluster


def _efficiency_chunk(gaps_eV, *, spectrum, connection):
    """Module-level so that workers import it by reference."""
    sol = solve_stacks(gaps_eV * EV, spectrum, connection, threads=1)
    return sol.op.p_mpp / sol.incident_W_m2


@pytest.fixture(scope="module")
def client():
    with cluster.connect("local:2") as c:
        yield c


def _grid(n=61):
    g = np.linspace(0.6, 2.4, n)
    top, bottom = np.meshgrid(g, g, indexing="ij")
    return np.column_stack([top.ravel(), bottom.ravel()])


@pytest.mark.parametrize("connection", ["series", "independent"])
def test_sweep_on_cluster_is_bit_identical(client, connection):
    gaps = _grid()
    spec = standard_spectrum("AM1.5G")
    chunks = np.array_split(gaps, 7)
    here = cluster.map_chunks(
        _efficiency_chunk, chunks, shared={"spectrum": spec, "connection": connection}
    )
    there = cluster.map_chunks(
        _efficiency_chunk,
        chunks,
        client=client,
        shared={"spectrum": spec, "connection": connection},
    )
    whole = _efficiency_chunk(gaps, spectrum=spec, connection=connection)
    assert len(client.scheduler_info()["workers"]) == 2
    # exact equality: the same floating-point operations run on the same inputs
    assert np.array_equal(np.concatenate(there), np.concatenate(here))
    assert np.array_equal(np.concatenate(there), whole)


def test_results_come_back_in_chunk_order(client):
    out = cluster.map_chunks(_identity_after_delay, list(range(6)), client=client)
    assert out == list(range(6))


def _identity_after_delay(k):
    import time

    time.sleep(0.05 * (6 - k))  # later chunks finish first
    return k


@pytest.mark.parametrize(
    "spec, match",
    [
        ("local:0", r"local:N needs 1 <= N"),
        ("local", r"must be local:N"),
        ("http://example:8786", r"must be local:N"),
        ("tcp://", r"must be local:N"),
    ],
)
def test_bad_cluster_addresses(spec, match):
    with pytest.raises(InputError, match=match):
        cluster.parse_cluster(spec)


def test_cluster_address_forms():
    assert cluster.parse_cluster("local:4") == ("local", 4)
    assert cluster.parse_cluster("tcp://127.0.0.1:8786") == ("address", "tcp://127.0.0.1:8786")


def test_unreachable_scheduler_is_one_line():
    # a port on loopback that nothing listens on (bound, then released)
    import socket

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    with pytest.raises(InputError, match="cannot reach the scheduler"):
        with cluster.connect(f"tcp://127.0.0.1:{port}", timeout_s=2.0):
            pass


@pytest.mark.parametrize("others", ["fixed", "optimised"])
def test_map_on_cluster_equals_local(client, others):
    from gapmatch.maps import compute_map

    kw = dict(
        x_range_eV=(1.4, 2.0),
        y_range_eV=(0.9, 1.3),
        step_eV=0.05,
        stack_eV=[1.8, 1.3, 0.9],
        axes=(1, 2),
        others=others,
        free_range_eV=(0.6, 1.2),
    )
    here = compute_map(("series", "independent"), **kw)
    there = compute_map(("series", "independent"), client=client, chunk_points=37, **kw)
    for c in here.efficiency:
        # bit-identical: every chunk runs the same floating-point operations
        assert np.array_equal(here.efficiency[c], there.efficiency[c])
        assert np.array_equal(here.gaps_eV[c], there.gaps_eV[c])


def test_map_cli_on_local_cluster(tmp_path, capsys):
    import json

    from gapmatch.cli import main

    args = ["map", "--range", "0.8", "2.0", "--step", "0.1", "--json"]
    assert main(args) == 0
    local = json.loads(capsys.readouterr().out)
    assert main([*args, "--cluster", "local:2"]) == 0
    remote = json.loads(capsys.readouterr().out)
    assert remote["connections"] == local["connections"]
