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

    args = ["map", "--x-gap-range", "0.8", "2.0", "--step", "0.1", "--json"]
    assert main(args) == 0
    local = json.loads(capsys.readouterr().out)
    assert main([*args, "--cluster", "local:2"]) == 0
    remote = json.loads(capsys.readouterr().out)
    assert remote["connections"] == local["connections"]


@pytest.fixture(scope="module")
def short_site():
    from gapmatch.energy import Mounting, demo_weather_path, read_weather
    from gapmatch.energy.spectra import hourly_spectra

    hs = hourly_spectra(read_weather(demo_weather_path()), Mounting(36.0, 180.0))
    return hs.take(slice(0, hs.hours, 7))


def test_yield_map_on_cluster_equals_local(client, short_site):
    """Chunks of stacks on two workers, spectra (with their photon table) scattered
    once: bit-identical to the same chunks in this process, and equal to one unchunked
    call of the energy API to 1e-12 (only the engine's block summation order differs)."""
    from gapmatch.energy import CellTemperature, yield_from_spectra
    from gapmatch.energy.maps import yield_batch, yield_map

    kw = dict(cell_temperature=CellTemperature("faiman"), ere=0.5)
    here = yield_map(short_site, (1.5, 2.1), (0.8, 1.3), 0.05, chunk_stacks=23, **kw)
    there = yield_map(
        short_site, (1.5, 2.1), (0.8, 1.3), 0.05, chunk_stacks=23, client=client, **kw
    )
    for c in ("series", "independent"):
        assert np.array_equal(here.energy_kWh_m2[c], there.energy_kWh_m2[c], equal_nan=True)
        assert np.array_equal(
            here.reference_efficiency[c], there.reference_efficiency[c], equal_nan=True
        )
    assert here.optima == there.optima
    gaps = here.to_frame()[["gap_1_eV", "gap_2_eV"]].to_numpy()
    whole = yield_from_spectra(short_site, gaps, ("series", "independent"), **kw)
    b = yield_batch(short_site, gaps, client=client, chunk_stacks=23, **kw)
    for c in ("series", "independent"):
        np.testing.assert_allclose(
            b["annual_energy_kWh_m2"][c], whole.annual_energy_kWh_m2(c), rtol=1e-12
        )


def test_site_map_cli_on_local_cluster(capsys):
    import json

    from gapmatch.cli import main

    args = [
        "map",
        "--weather",
        "demo",
        "--x-gap-range",
        "1.6",
        "2.0",
        "--y-gap-range",
        "1.0",
        "1.2",
    ]
    args += ["--step", "0.1", "--json"]
    assert main(args) == 0
    local = json.loads(capsys.readouterr().out)
    assert main([*args, "--cluster", "local:2"]) == 0
    remote = json.loads(capsys.readouterr().out)
    assert remote["optima"] == local["optima"]
    assert "IEC 61853" in remote["caution"]


ROADMAP = """
[roadmap]
name = "cluster-test"
title = "cluster test (fictional)"
milestones = [2030]
draws = 120
seed = 5

[[candidates]]
name = "wide on Si"
materials = ["perovskite-wide", "Si"]
connection = "series"

[[candidates]]
name = "wide on CIGS"
materials = ["perovskite-wide", "CIGS"]
connection = "independent"

[[projections]]
material = "perovskite-wide"
years = [2030]
ere = { low = 1e-4, likely = 1e-3, high = 1e-2 }
source = "invented for the test"
"""


def test_roadmap_draws_on_cluster_equal_local(client, tmp_path):
    from gapmatch.roadmap import load_roadmap, run_roadmap

    f = tmp_path / "rm.toml"
    f.write_text(ROADMAP)
    study = load_roadmap(f)
    here = run_roadmap(study)
    there = run_roadmap(study, client=client, draw_chunk=17)
    assert len(here.outcomes) == len(there.outcomes) == 2
    for a, b in zip(here.outcomes, there.outcomes, strict=True):
        assert a.values.shape == (120,)
        assert np.array_equal(a.values, b.values)
        assert a.probability_best == b.probability_best


def test_roadmap_cli_on_local_cluster(tmp_path, capsys):
    import json

    from gapmatch.cli import main

    f = tmp_path / "rm.toml"
    f.write_text(ROADMAP)
    assert main(["roadmap", str(f), "--json", "--quiet"]) == 0
    local = json.loads(capsys.readouterr().out)
    assert main(["roadmap", str(f), "--json", "--quiet", "--cluster", "local:2"]) == 0
    remote = json.loads(capsys.readouterr().out)
    assert remote["milestones"] == local["milestones"]


def _shared_kinds(k, *, empty, mapping, pair):
    return (k, empty, mapping, pair)


def test_shared_containers_arrive_whole(client):
    """Bug: an empty dict in ``shared`` made Client.scatter fail (it scatters a dict's
    items one by one); dicts, tuples and empty ones must arrive as the objects given."""
    out = cluster.map_chunks(
        _shared_kinds,
        [0, 1],
        client=client,
        shared={"empty": {}, "mapping": {"a": 1}, "pair": ("series", "independent")},
    )
    assert out == [(k, {}, {"a": 1}, ("series", "independent")) for k in (0, 1)]
