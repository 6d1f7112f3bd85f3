"""The invented example scenarios in examples/ run through the API as shown in the README."""

import json
from pathlib import Path

import pytest

from service.app import create_app
from tests.test_jobs import _submit, _wait


def job_location(job: dict) -> str:
    return f"/v1/jobs/{job['id']}"


EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.json"))


def test_there_are_three_examples():
    assert len(EXAMPLES) == 3


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_example_forecasts(tmp_path, path):
    """Each example as the README shows it: synchronously, or, where the compute budget says
    it cannot finish within the request's wall-clock cap (the 3D pier on a 2-core machine), as
    the job the refusal points to, whose result is the same body."""
    app = create_app({"TESTING": True, "DATABASE": str(tmp_path / "examples.sqlite3")})
    client = app.test_client()
    scenario = json.loads(path.read_text())
    try:
        response = client.post("/v1/forecasts", json=scenario)
        if response.status_code == 422:
            message = response.get_json()["errors"][0]["message"]
            assert "wall-clock cap" in message and "respond-async" in message, message
            job = _wait(client, _submit(client, "/v1/forecasts", scenario), timeout_s=600)
            assert job["state"] == "done", job
            response = client.get(f"{job_location(job)}/result")
    finally:
        runner = app.extensions.get("pourheat_jobs")
        if runner is not None:
            runner.stop()
    assert response.status_code == 200, response.get_json()
    body = response.get_json()
    assert set(body["series"]["sensors"]) == {s["id"] for s in scenario["sensors"]}
    summary = body["summary"]
    # the peak cannot be below the warmest sensor, nor the differential below zero
    warmest = max(max(v) for v in body["series"]["sensors"].values())
    assert summary["peak_temperature_c"] >= warmest - 1e-3
    assert summary["max_differential_c"] >= 0.0
    assert body["numerics"]["energy_imbalance"] < 0.005
