"""Many-forecast work on a real Dask cluster: a ``dask scheduler`` and two ``dask worker``
processes started on loopback, driven through ``POURHEAT_DASK_SCHEDULER`` as in production.

Results on the cluster must equal those of local processes exactly (same code, same inputs,
one BLAS thread everywhere); a worker killed mid-way must neither lose work nor hang the
caller; an unreachable scheduler is a prompt 503.
"""

import os
import signal
import threading
import time
from collections.abc import Iterator

import pytest

from service import parallel
from service.forecasting import run_forecast
from service.planning import run_comparison
from tests.dask_cluster import Cluster, free_port

SECTION = {
    "element": {"shape": "section", "width_m": 1.2, "height_m": 1.6},
    "mix": {"cement_kg_m3": 360, "water_kg_m3": 160, "cement_type": "type_i"},
    "placement": {"temperature_c": 18.0},
    "ambient": {"daily_min_c": 8.0, "daily_max_c": 20.0, "wind_m_s": 3.0},
    "faces": {"top": {"insulation_r_m2k_w": 0.5}, "sides": {"formwork_r_m2k_w": 0.2}},
    "resolution": {"max_cell_m": 0.2, "surface_cell_m": 0.05},
    "duration_h": 72,
}
"""A small wall section (invented): each forecast takes a fraction of a second."""
VARIANTS = {
    f"placed at {t} C": {"placement": {"temperature_c": t}} for t in (10, 12, 14, 16, 20, 22)
}
BUDGET = 4e7


def _cluster(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Cluster]:
    cluster = Cluster(str(tmp_path_factory.mktemp("dask")))
    try:
        yield cluster
    finally:
        cluster.stop()


@pytest.fixture(scope="module")
def cluster(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Cluster]:
    """A cluster shared by the tests that do not harm it."""
    yield from _cluster(tmp_path_factory)


@pytest.fixture
def own_cluster(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Cluster]:
    """A cluster for one test that kills its workers."""
    yield from _cluster(tmp_path_factory)


def _tasks_seen(address: str) -> int:
    """Tasks the scheduler has run so far (its task stream), to prove work went there."""
    from distributed import Client

    with Client(address, timeout=30, set_as_default=False) as client:
        return len(client.get_task_stream(start=0))


def _on(address: str | None, monkeypatch: pytest.MonkeyPatch) -> None:
    if address is None:
        monkeypatch.delenv(parallel.SCHEDULER_VARIABLE, raising=False)
    else:
        monkeypatch.setenv(parallel.SCHEDULER_VARIABLE, address)


def test_uncertainty_band_on_the_cluster_equals_local(cluster, monkeypatch):
    payload = {**SECTION, "uncertainty": {"samples": 8, "seed": 3, "air_sd_c": 2.0}}
    _on(None, monkeypatch)
    _, local = run_forecast(payload, BUDGET)
    before = _tasks_seen(cluster.address)
    _on(cluster.address, monkeypatch)
    _, remote = run_forecast(payload, BUDGET)
    assert _tasks_seen(cluster.address) - before >= 8
    assert remote["summary"]["uncertainty"] == local["summary"]["uncertainty"]


def test_comparison_on_the_cluster_equals_local(cluster, monkeypatch):
    payload = {"base": SECTION, "variants": VARIANTS}
    _on(None, monkeypatch)
    local = run_comparison(payload, BUDGET)
    before = _tasks_seen(cluster.address)
    _on(cluster.address, monkeypatch)
    seen: list[tuple[int, int]] = []
    remote = run_comparison(payload, BUDGET, progress=lambda d, t: seen.append((d, t)))
    assert _tasks_seen(cluster.address) - before >= len(VARIANTS) + 1
    assert remote == local
    assert seen[-1] == (len(VARIANTS) + 1, len(VARIANTS) + 1)


def test_a_worker_killed_midway_loses_nothing(own_cluster, monkeypatch):
    payload = {"base": SECTION, "variants": VARIANTS}
    _on(None, monkeypatch)
    local = run_comparison(payload, BUDGET)
    _on(own_cluster.address, monkeypatch)
    first_done = threading.Event()
    outcome: dict[str, object] = {}

    def compare() -> None:
        outcome["rows"] = run_comparison(
            payload, BUDGET, time.monotonic() + 120, progress=lambda d, t: first_done.set()
        )

    runner = threading.Thread(target=compare)
    runner.start()
    assert first_done.wait(60), "no forecast finished on the cluster"
    victim = own_cluster.workers[0]
    os.killpg(victim.pid, signal.SIGKILL)
    runner.join(120)
    assert not runner.is_alive(), "the comparison hung after a worker was killed"
    assert victim.wait(10) == -signal.SIGKILL
    assert outcome["rows"] == local


def test_a_cluster_without_workers_answers_503_by_the_deadline(own_cluster, client, monkeypatch):
    for worker in own_cluster.workers:
        os.killpg(worker.pid, signal.SIGKILL)
        worker.wait(10)
    _on(own_cluster.address, monkeypatch)
    client.application.config["FORECAST_TIMEOUT_S"] = 10
    started = time.monotonic()
    answer = client.post("/v1/comparisons", json={"base": SECTION, "variants": VARIANTS})
    assert answer.status_code == 503
    assert "Retry-After" in answer.headers
    assert time.monotonic() - started < 25


def test_an_unreachable_scheduler_is_a_503_naming_the_setting(client, monkeypatch):
    _on(f"tcp://127.0.0.1:{free_port()}", monkeypatch)
    monkeypatch.setattr(parallel, "CONNECT_TIMEOUT_S", 2.0)
    answer = client.post("/v1/comparisons", json={"base": SECTION, "variants": VARIANTS})
    assert answer.status_code == 503
    assert parallel.SCHEDULER_VARIABLE in answer.get_json()["detail"]
    assert "Retry-After" in answer.headers


def test_a_malformed_scheduler_setting_stops_start_up(monkeypatch):
    from service.app import create_app

    monkeypatch.setenv(parallel.SCHEDULER_VARIABLE, "127.0.0.1:8786")
    with pytest.raises(RuntimeError, match=parallel.SCHEDULER_VARIABLE):
        create_app({"TESTING": True})


def test_refresh_on_the_cluster_equals_local(cluster, tmp_path, monkeypatch):
    from service import store
    from service.refresh import refresh_pours
    from tests.test_refresh import COMPARED, stored_pours

    database = str(tmp_path / "refresh.sqlite3")
    stored_pours(database)
    db = store.connect(database)
    try:
        _on(None, monkeypatch)
        local = refresh_pours(db, BUDGET)
        before = _tasks_seen(cluster.address)
        _on(cluster.address, monkeypatch)
        remote = refresh_pours(db, BUDGET)
    finally:
        db.close()
    assert _tasks_seen(cluster.address) - before >= 2
    assert [{k: s[k] for k in COMPARED} for s in remote] == [
        {k: s[k] for k in COMPARED} for s in local
    ]


def test_gunicorn_with_a_cluster_answers_comparisons(cluster, tmp_path, monkeypatch):
    """The deployment as run (deploy/gunicorn.conf.py, POURHEAT_DASK_SCHEDULER set): a
    comparison through gunicorn equals the local one (the worker model must let the Dask
    client run)."""
    import subprocess
    import sys

    import requests

    from tests.dask_cluster import PROJECT_ROOT

    payload = {"base": SECTION, "variants": VARIANTS}
    _on(None, monkeypatch)
    local = run_comparison(payload, BUDGET)
    port = free_port()
    env = {
        **os.environ,
        "PORT": str(port),
        "POURHEAT_WORKERS": "2",
        "POURHEAT_DB": str(tmp_path / "g.sqlite3"),
        parallel.SCHEDULER_VARIABLE: cluster.address,
    }
    log = (tmp_path / "gunicorn.log").open("w")
    server = subprocess.Popen(
        [sys.executable, "-m", "gunicorn", "--config", "deploy/gunicorn.conf.py",
         "service.app:create_app()"],
        cwd=PROJECT_ROOT, env=env, stdout=log, stderr=log, start_new_session=True,
    )  # fmt: skip
    try:
        deadline = time.monotonic() + 90
        while True:
            assert server.poll() is None, (tmp_path / "gunicorn.log").read_text()
            try:
                requests.get(f"http://127.0.0.1:{port}/healthz", timeout=5)
                break
            except requests.RequestException:
                assert time.monotonic() < deadline, "gunicorn did not start"
                time.sleep(0.2)
        answer = requests.post(f"http://127.0.0.1:{port}/v1/comparisons", json=payload, timeout=60)
        assert answer.status_code == 200, answer.text
        assert answer.json() == local
    finally:
        server.send_signal(signal.SIGINT)
        server.wait(timeout=30)
        log.close()


def test_section_calibration_on_the_cluster_equals_one_after_another(cluster, monkeypatch):
    """The Jacobian forecasts of a section's calibration sent to the cluster: same fit, to the
    last digit, as running them in turn here (the wall of tests/test_calibration.py)."""
    from functools import partial

    import numpy as np

    from model.calibration import calibrate, with_parameters
    from model.solver import forecast
    from tests.test_calibration import SIDE_TRUTH, _site_readings, three_sensor_wall

    plan = three_sensor_wall()
    truth = forecast(with_parameters(plan, SIDE_TRUTH))
    readings = _site_readings(truth, ("C", "T", "S"), np.arange(1.0, 25.0), seed=3)
    here = calibrate(plan, *readings)
    before = _tasks_seen(cluster.address)
    _on(cluster.address, monkeypatch)
    there = calibrate(plan, *readings, mapper=partial(parallel.run_many, deadline=None))
    assert _tasks_seen(cluster.address) - before >= 4  # one task per fitted parameter, per step
    assert there.values == here.values
    assert there.forecasts == here.forecasts
