"""Bounded work per request: the compute budget counts the cells the solver really computes and
the output a forecast would report, refuses oversize requests at once with advice, caps error
lists, and gunicorn recycles its workers. No timed tests: the cost per cell-step is measured by
scripts/measure_budget.py."""

import copy
import json
import math
import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import gunicorn.config
import pytest
import requests

from model.grid import cell_count
from model.solver import ThermalSolver
from service.errors import MAX_LISTED_ERRORS
from service.forecasting import (
    band_rounds,
    check_budget,
    estimated_seconds,
    parallel_rounds,
    validated_scenario,
)
from service.limits import DEFAULT_FORECAST_TIMEOUT_S

REPO = Path(__file__).resolve().parents[1]
PIER = json.loads((REPO / "examples" / "pier-footing-on-rock.json").read_text(encoding="utf-8"))


def test_cell_count_is_the_solvers(contract_scenario):
    """The pier sits on a wider rock layer: the void beside it is not computed (27,540 cells,
    not the 43,956 of the whole box)."""
    _, scenario, _ = validated_scenario(PIER)
    assert cell_count(scenario) == ThermalSolver(scenario).network.size


def test_pier_is_refused_within_the_default_timeout_and_accepted_as_a_job():
    """The pier run to 650 h took 35 s when the budget accepted it. With the graded 3D grid
    the example's own 240 h takes 12 s of one idle core here and is estimated at 38 s
    (scripts/measure_budget.py, 2026-12-03), more than the 60 % of the default 40 s request cap
    the budget allows: refused for a request (pointing to jobs), accepted, like the 650 h run,
    within a job's 30 min cap."""
    deadline = time.monotonic() + DEFAULT_FORECAST_TIMEOUT_S
    job_deadline = time.monotonic() + 1800.0  # POURHEAT_JOB_TIMEOUT_S default
    for hours in (240, 650):
        _, scenario, _ = validated_scenario({**copy.deepcopy(PIER), "duration_h": hours})
        with pytest.raises(ValueError, match="respond-async"):
            check_budget(scenario, 1e12, deadline=deadline)
        check_budget(scenario, 1e12, deadline=job_deadline)


def test_oversize_output_is_refused_at_once_with_advice_that_works(client, contract_scenario):
    """20 sensors, 300 h reported every 0.01 h: about 2.8 million numbers. Refused with a 422
    naming output_interval_h and the interval to use; that interval is then accepted."""
    scenario = copy.deepcopy(contract_scenario)
    scenario["element"]["thickness_m"] = 1.0
    scenario["sensors"] = [{"id": f"S{i}", "depth_m": 0.05 * (i + 1)} for i in range(20)]
    scenario["duration_h"] = 300
    scenario["output_interval_h"] = 0.01
    response = client.post("/v1/forecasts", json=scenario)
    assert response.status_code == 422
    assert len(response.data) < 5000
    (error,) = response.get_json()["errors"]
    assert error["field"] == "output_interval_h"
    advised = float(error["message"].split("raise output_interval_h to at least ")[1].split()[0])
    scenario["output_interval_h"] = advised
    assert client.post("/v1/forecasts", json=scenario).status_code == 200


@pytest.fixture
def many_sensor_pour(tmp_path):
    from service.app import create_app

    app = create_app({"TESTING": True, "DATABASE": str(tmp_path / "b.sqlite3")})
    client = app.test_client()
    scenario = copy.deepcopy(PIER)
    scenario["sensors"] = [{"id": f"sensor-{i:03d}", "depth_m": 1.0} for i in range(200)]
    created = client.post(
        "/v1/pours",
        json={"name": "Many", "placed_at": "2026-11-02T07:00:00-05:00", "scenario": scenario},
    )
    assert created.status_code == 201, created.get_json()
    return client, created.get_json()["id"]


def test_error_lists_are_capped_and_do_not_repeat_context(many_sensor_pour):
    """20,000 rows naming an unknown sensor: the first 100 errors and a count, each message
    short (the pour's 200 sensor ids are not repeated in every error)."""
    client, pour = many_sensor_pour
    rows = "".join(
        f"2026-11-02T13:{i // 600 % 60:02d}:{i % 60:02d}Z,nope,20\n" for i in range(20000)
    )
    response = client.post(
        f"/v1/pours/{pour}/readings",
        data="time,sensor,temperature_c\n" + rows,
        content_type="text/csv",
    )
    assert response.status_code == 422
    body = response.get_json()
    assert len(body["errors"]) == MAX_LISTED_ERRORS and body["errors_count"] == 20000
    assert len(response.data) < 30_000
    assert all("sensor-199" not in e["message"] for e in body["errors"])


def test_rejected_rows_of_a_partial_upload_are_capped(many_sensor_pour):
    client, pour = many_sensor_pour
    good = [f"2026-11-02T13:{m:02d}:00Z,sensor-000,20" for m in range(50)]
    bad = [f"2026-11-02T14:{m % 60:02d}:{m // 60:02d}Z,nope,20" for m in range(300)]
    response = client.post(
        f"/v1/pours/{pour}/readings",
        data="\n".join(["time,sensor,temperature_c", *good, *bad]) + "\n",
        content_type="text/csv",
    )
    body = response.get_json()
    assert response.status_code == 200 and body["accepted"] == 50
    assert len(body["rejected"]) == MAX_LISTED_ERRORS and body["rejected_count"] == 300


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_gunicorn_recycles_workers_after_max_requests(tmp_path):
    """deploy/gunicorn.conf.py sets max_requests with jitter: run with a small count, one
    worker: the worker is replaced, and every request is answered (a request that comes
    while the new worker boots waits in the listen queue)."""
    port = _free_port()
    settings = gunicorn.config.Config().settings
    quiet = ["--no-control-socket"] if "control_socket_disable" in settings else []
    env = {
        **os.environ,
        "PORT": str(port),
        "POURHEAT_WORKERS": "1",
        "POURHEAT_MAX_REQUESTS": "3",
        "POURHEAT_MAX_REQUESTS_JITTER": "1",
        "POURHEAT_DB": str(tmp_path / "g.sqlite3"),
    }
    log_path = tmp_path / "gunicorn.log"
    with log_path.open("w") as log:
        server = subprocess.Popen(
            [sys.executable, "-m", "gunicorn", "--config", "deploy/gunicorn.conf.py", *quiet,
             "service.app:create_app()"],
            cwd=REPO, env=env, stdout=log, stderr=log, start_new_session=True,
        )  # fmt: skip
        try:
            statuses = []
            deadline = time.monotonic() + 30
            while not statuses:
                assert server.poll() is None, log_path.read_text()
                try:
                    statuses.append(requests.get(f"http://127.0.0.1:{port}/healthz", timeout=5))
                except requests.RequestException:
                    assert time.monotonic() < deadline, "gunicorn did not start"
                    time.sleep(0.1)
            for _ in range(7):
                for _attempt in range(50):  # a connection may land while the worker restarts
                    try:
                        statuses.append(
                            requests.get(f"http://127.0.0.1:{port}/healthz", timeout=60)
                        )
                        break
                    except requests.ConnectionError:
                        time.sleep(0.1)
            assert [r.status_code for r in statuses] == [200] * 8
        finally:
            server.send_signal(signal.SIGINT)  # quick shutdown: no wait for idle keep-alives
            server.wait(timeout=30)
    text = log_path.read_text()
    assert "Autorestarting worker" in text, text  # 8 requests, a new worker every 3 or 4


def test_a_band_on_a_block_is_budgeted_at_the_coarse_grid_cost(contract_scenario):
    """Sections and blocks forecast a band's samples on the coarse grid: the budget counts them
    at the ratio of estimated times, so the pier's 32-sample band costs a few forecasts, not 17
    (on 2 cores); a slab's batch as before."""
    _, pier, _ = validated_scenario(PIER)
    share = estimated_seconds(pier.coarsened()) / estimated_seconds(pier)
    assert 0.05 < share < 0.25
    assert band_rounds(pier, 32) == 1 + math.ceil(parallel_rounds(33) * share)
    assert 2 <= band_rounds(pier, 32) < 1 + parallel_rounds(32)
    _, slab, _ = validated_scenario(contract_scenario)
    assert band_rounds(slab, 32) == 1 + parallel_rounds(32)
