"""Trials per second of a 4-junction search on each storage with 1, 2 and 4 workers.

Storages: PostgreSQL (a private server started here, or ``--pg-url``), SQLite and the
journal file. The rate is the counted trials over the span from the first trial's start
to the last one's end (the Sobol stage and the polish are not part of it). On a 2-core
machine more workers mostly add contention; the point is that the same search runs on a
server shared by many machines.

Usage: ``python benchmarks/search_storage.py [--trials N] [--pg-url URL]``. The last
lines are one per run: ``storage=NAME workers=W trials_per_s=X``.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
from pathlib import Path

import optuna

ROOT = Path(__file__).resolve().parents[1]
sys.path[:0] = [str(ROOT), str(ROOT / "tests")]

from gapmatch.search import make_problem, optimise  # noqa: E402
from gapmatch.search.storage import open_storage, storage_url  # noqa: E402


def rate(storage: str, name: str) -> float:
    study = optuna.load_study(study_name=name, storage=open_storage(storage_url(storage)))
    ts = [
        t
        for t in study.get_trials(deepcopy=False)
        if t.user_attrs.get("stage") not in ("polish", "surplus")
        and t.state == optuna.trial.TrialState.COMPLETE
    ]
    span = (
        max(t.datetime_complete for t in ts) - min(t.datetime_start for t in ts)
    ).total_seconds()
    return len(ts) / span


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--trials", type=int, default=40)
    ap.add_argument("--pg-url", help="an empty PostgreSQL database (default: start one)")
    args = ap.parse_args()
    problem = make_problem(4, "series")
    tmp = Path(tempfile.mkdtemp(prefix="gapmatch-bench-"))
    server = None
    pg_url = args.pg_url
    if pg_url is None:
        from pg_server import PostgresServer, pg_bin

        if pg_bin() is not None:
            server = PostgresServer(pg_bin()).start()
    try:
        rows = []
        for workers in (1, 2, 4):
            stores = {
                "sqlite": str(tmp / f"w{workers}.db"),
                "journal": f"journal:{tmp / f'w{workers}.journal'}",
            }
            if server is not None:
                stores["postgresql"] = server.new_database()
            elif pg_url:
                stores["postgresql"] = pg_url
            for kind, st in stores.items():
                name = f"bench-{kind}-{workers}"
                optimise(
                    problem,
                    trials=args.trials,
                    storage=st,
                    study_name=name,
                    workers=workers,
                    global_samples=2**12,
                    polish_starts=1,
                    progress=False,
                )
                rows.append((kind, workers, rate(st, name)))
                print(
                    f"storage={kind} workers={workers} trials_per_s={rows[-1][2]:.1f}", flush=True
                )
    finally:
        if server is not None:
            server.stop()


if __name__ == "__main__":
    main()
