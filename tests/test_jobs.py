"""Asynchronous jobs (Prefer: respond-async, /v1/jobs) on both store backends: the same answer
as the synchronous call in each format, progress, time cap, cancellation, resumption after a
runner died, expiry of results and access control."""

import copy
import time

import pytest

from service import jobs, store
from service.app import create_app
from service.job_runner import ensure_runner
from tests.conftest import CONTRACT_SCENARIO

ASYNC = {"Prefer": "respond-async"}
BLOCK = {
    **copy.deepcopy(CONTRACT_SCENARIO),
    "element": {"shape": "block", "length_m": 6.0, "width_m": 4.0, "height_m": 2.0},
    "faces": {"top": {"insulation_r_m2k_w": 0.5}, "bottom": {"adiabatic": True}},
    "duration_h": 2000,
}
"""A 3D block forecast of 2000 h: runs for many seconds, long enough to be cancelled."""


@pytest.fixture
def make_app(database_url):
    """Apps on one fresh database; their job runners are stopped at the end."""
    apps = []

    def make(**settings):
        app = create_app({"TESTING": True, "DATABASE": database_url, **settings})
        apps.append(app)
        return app

    yield make
    for app in apps:
        runner = app.extensions.get("pourheat_jobs")
        if runner is not None:
            runner.stop()


@pytest.fixture
def app(make_app):
    return make_app()


@pytest.fixture
def client(app):
    return app.test_client()


def _wait(client, location, timeout_s=120.0, headers=None):
    """Poll a job until it has ended; returns its last representation."""
    deadline = time.monotonic() + timeout_s
    while True:
        response = client.get(location, headers=headers or {})
        assert response.status_code == 200, response.get_data(as_text=True)
        job = response.get_json()
        if job["state"] not in ("queued", "running"):
            return job
        assert response.headers["Retry-After"] == "2"
        assert time.monotonic() < deadline, job
        time.sleep(0.2)


def _submit(client, url, payload, headers=None):
    response = client.post(url, json=payload, headers={**ASYNC, **(headers or {})})
    assert response.status_code == 202, response.get_data(as_text=True)
    assert response.headers["Preference-Applied"] == "respond-async"
    assert "Prefer" in response.headers["Vary"]
    location = response.headers["Location"]
    assert location == f"/v1/jobs/{response.get_json()['id']}"
    assert response.get_json()["state"] == "queued"
    return location


def test_forecast_job_gives_the_synchronous_answer_in_each_format(client, contract_scenario):
    location = _submit(client, "/v1/forecasts?units=us", contract_scenario)
    job = _wait(client, location)
    assert job["state"] == "done", job
    assert job["kind"] == "forecast"
    # progress: one forecast of one, the whole 168 h horizon simulated
    assert job["progress"] == {
        "forecasts_done": 1, "forecasts_total": 1, "simulated_h": 168.0, "horizon_h": 168.0,
    }  # fmt: skip
    assert job["attempts"] == 1
    assert job["run_s"] > 0 and job["queued_s"] >= 0
    assert job["finished_at"] >= job["started_at"] >= job["created_at"]
    synchronous = client.post("/v1/forecasts?units=us", json=contract_scenario).get_json()
    assert job["result"] == synchronous  # in the units the request used
    result = f"{location}/result"
    assert client.get(result).get_json() == synchronous
    sync_csv = client.post("/v1/forecasts?format=csv", json=contract_scenario)
    csv = client.get(result, headers={"Accept": "text/csv"})
    assert csv.mimetype == "text/csv"
    assert "time_h" in csv.get_data(as_text=True).splitlines()[0]
    # units=us was part of the request: the CSV is in F as well, the SI CSV differs
    assert csv.get_data() != sync_csv.get_data()
    us_csv = client.post("/v1/forecasts?units=us&format=csv", json=contract_scenario)
    assert csv.get_data() == us_csv.get_data()
    svg = client.get(f"{result}?format=svg")
    assert svg.mimetype == "image/svg+xml" and b"<svg" in svg.get_data()


def test_comparison_and_pour_forecast_jobs(client, contract_scenario):
    comparison = {
        "base": contract_scenario,
        "variants": {"cooler": {"placement": {"temperature_c": 12.0}}},
    }
    job = _wait(client, _submit(client, "/v1/comparisons", comparison))
    assert job["state"] == "done", job
    assert (job["progress"]["forecasts_done"], job["progress"]["forecasts_total"]) == (2, 2)
    assert job["result"] == client.post("/v1/comparisons", json=comparison).get_json()
    csv = client.get(f"/v1/jobs/{job['id']}/result?format=csv").get_data(as_text=True)
    assert csv == client.post("/v1/comparisons?format=csv", json=comparison).get_data(as_text=True)

    scenario = {**contract_scenario, "sensors": [{"id": "S1", "depth_m": 1.0}]}
    pour = client.post(
        "/v1/pours",
        json={"name": "Mat", "placed_at": "2026-11-02T12:00:00Z", "scenario": scenario},
    ).get_json()["id"]
    response = client.get(f"/v1/pours/{pour}/forecast", headers=ASYNC)
    assert response.status_code == 202
    job = _wait(client, response.headers["Location"])
    assert job["state"] == "done", job
    assert job["kind"] == "pour_forecast"
    assert job["result"]["calibration"]["readings_used"] == 0
    assert (
        job["result"]["summary"] == client.get(f"/v1/pours/{pour}/forecast").get_json()["summary"]
    )
    assert client.get("/v1/pours/nope/forecast", headers=ASYNC).status_code == 404


def test_invalid_request_is_refused_at_once(client, contract_scenario):
    contract_scenario["element"]["thickness_m"] = -1
    response = client.post("/v1/forecasts", json=contract_scenario, headers=ASYNC)
    assert response.status_code == 422
    assert response.get_json()["errors"][0]["field"] == "element.thickness_m"
    response = client.post("/v1/plans", json={"solve_for": ["x"]}, headers=ASYNC)
    assert response.status_code == 422
    assert client.get("/v1/jobs/0123456789abcdef").status_code == 404


def test_plan_over_the_request_cap_completes_as_a_job(make_app):
    """A plan that the synchronous call refuses for the wall-clock cap (422 when the compute
    budget predicts it cannot finish in time, 503 when it hits the cap) completes as a job with
    its own cap. The request cap is set low here so that a small plan stands in for the pier
    plan of examples/ (about a minute of 3D forecasts; README, "Jobs", gives its measured run)."""
    app = make_app(FORECAST_TIMEOUT_S=0.05)
    client = app.test_client()
    plan = {
        "scenario": {**copy.deepcopy(CONTRACT_SCENARIO), "duration_h": 120},
        "solve_for": ["max_placement_temperature_c"],
    }
    assert client.post("/v1/plans", json=plan).status_code in (422, 503)
    job = _wait(client, _submit(client, "/v1/plans", plan))
    assert job["state"] == "done", job
    control = job["result"]["controls"]["max_placement_temperature_c"]
    assert control["status"] in ("found", "met_over_range", "missed_over_range"), control
    assert job["progress"]["forecasts_done"] == control["forecasts_run"]
    assert job["progress"]["forecasts_total"] is None


def test_time_cap_fails_the_job_with_problem_details(make_app, contract_scenario):
    client = make_app(JOB_TIMEOUT_S=0.001).test_client()
    job = _wait(client, _submit(client, "/v1/forecasts", contract_scenario))
    assert job["state"] == "failed"
    assert job["error"]["status"] == 503
    assert "POURHEAT_JOB_TIMEOUT_S" in job["error"]["detail"]
    result = client.get(f"/v1/jobs/{job['id']}/result")
    assert result.status_code == 503
    assert result.mimetype == "application/problem+json"


def test_cancel_stops_a_running_job_and_the_runner_goes_on(client, contract_scenario):
    location = _submit(client, "/v1/forecasts", BLOCK)
    deadline = time.monotonic() + 60
    while client.get(location).get_json()["progress"]["simulated_h"] is None:
        assert time.monotonic() < deadline, "the job did not start"
        time.sleep(0.2)
    cancelled = client.delete(location)
    assert cancelled.status_code == 200
    assert cancelled.get_json()["state"] == "cancelled"
    # the runner stops the job's process and takes the next job
    job = _wait(client, _submit(client, "/v1/forecasts", contract_scenario))
    assert job["state"] == "done"
    stopped = client.get(location).get_json()
    assert stopped["state"] == "cancelled"
    assert stopped["progress"]["simulated_h"] < BLOCK["duration_h"]
    assert client.get(f"{location}/result").status_code == 409
    # an ended job is deleted with its result
    assert client.delete(location).status_code == 204
    assert client.get(location).status_code == 404


def test_a_dead_runners_job_is_resumed_once_then_failed(make_app, contract_scenario, database_url):
    """Jobs left 'running' by a runner that died (lease expired) are claimed again; a job
    whose runner died twice is failed with the reason, never left without a word."""
    app = make_app(JOB_WORKERS=0)  # no runner yet: the jobs are set up by hand first
    db = store.connect(database_url)
    try:
        ids = [jobs.create_job(db, "forecast", contract_scenario, {}, 1) for _ in range(2)]
        for job_id, attempts in zip(ids, (1, 2), strict=True):
            db.run(
                "UPDATE jobs SET state = 'running', lease_owner = 'gone:1:x', attempts = ?,"
                " started_at = ?, lease_expires_at = ? WHERE id = ?",
                (attempts, "2026-01-01T00:00:00.000000Z", "2026-01-01T00:00:30.000000Z", job_id),
            )
    finally:
        db.close()
    app.config["JOB_WORKERS"] = 1
    ensure_runner(app)
    client = app.test_client()
    resumed = _wait(client, f"/v1/jobs/{ids[0]}")
    assert resumed["state"] == "done" and resumed["attempts"] == 2
    abandoned = _wait(client, f"/v1/jobs/{ids[1]}")
    assert abandoned["state"] == "failed"
    assert "stopped 2 times" in abandoned["error"]["detail"]


def test_results_expire(make_app, contract_scenario):
    client = make_app(JOB_RESULT_TTL_S=1.0).test_client()
    job = _wait(client, _submit(client, "/v1/forecasts", contract_scenario))
    assert job["state"] == "done"
    time.sleep(1.2)
    gone = client.get(f"/v1/jobs/{job['id']}/result")
    assert gone.status_code == 410
    assert "POURHEAT_JOB_RESULT_TTL_S" in gone.get_json()["detail"]


@pytest.mark.parametrize("database_url", ["sqlite"], indirect=True)
def test_jobs_honour_the_tokens(make_app, contract_scenario):
    token = "s3cret-token-for-the-tests"
    client = make_app(AUTH_TOKENS=token).test_client()
    location = _submit(client, "/v1/forecasts", contract_scenario)  # compute POSTs are reads
    assert client.delete(location).status_code == 401
    _wait(client, location)
    reads = make_app(AUTH_TOKENS=token, AUTH_READS=True).test_client()
    assert reads.get(location).status_code == 401
    bearer = {"Authorization": f"Bearer {token}"}
    assert reads.get(location, headers=bearer).status_code == 200
    assert reads.delete(location, headers=bearer).status_code == 204
