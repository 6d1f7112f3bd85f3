"""Throughput of ``refresh_pours`` (what ``pourheat refresh`` runs): N stored pours, each with
24 h of readings, refreshed on local processes and on a real Dask cluster with one worker and
with two (scheduler and workers started here on loopback). Prints pours per minute and the
ratio of two workers to one, measured in this one process.

    .venv/bin/python scripts/refresh_throughput.py [--pours 8]
"""

import argparse
import os
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")

from service import store  # noqa: E402
from service.parallel import SCHEDULER_VARIABLE  # noqa: E402
from service.refresh import refresh_pours  # noqa: E402
from tests.dask_cluster import Cluster  # noqa: E402
from tests.test_refresh import stored_pours  # noqa: E402

BUDGET = 4e7


def timed_refresh(database: str, address: str | None) -> float:
    """Seconds to refresh every pour once on the executor named by ``address``."""
    if address is None:
        os.environ.pop(SCHEDULER_VARIABLE, None)
    else:
        os.environ[SCHEDULER_VARIABLE] = address
    db = store.connect(database)
    try:
        started = time.perf_counter()
        statuses = refresh_pours(db, BUDGET)
        elapsed = time.perf_counter() - started
    finally:
        db.close()
    failed = [s for s in statuses if "error" in s]
    if failed:
        raise SystemExit(f"refresh failed: {failed[0]['error']}")
    return elapsed


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--pours", type=int, default=8)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        database = str(Path(folder) / "pours.sqlite3")
        stored_pours(database, args.pours)
        rows = [("local processes", timed_refresh(database, None))]
        for workers in (1, 2):
            with Cluster(str(Path(folder) / f"dask{workers}"), workers) as cluster:
                timed_refresh(database, cluster.address)  # warm the workers' imports
                rows.append(
                    (f"Dask, {workers} worker(s)", timed_refresh(database, cluster.address))
                )
    print(f"refresh of {args.pours} stored pours (24 h of readings each), {os.cpu_count()} cores")
    print(f"{'executor':<22} {'seconds':>8} {'pours/min':>10}")
    for name, seconds in rows:
        print(f"{name:<22} {seconds:8.1f} {60 * args.pours / seconds:10.1f}")
    print(f"two workers / one worker: {rows[1][1] / rows[2][1]:.2f}x")


if __name__ == "__main__":
    main()
