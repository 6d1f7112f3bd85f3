"""The invented example scenarios in examples/ run through the API as shown in the README."""

import json
from pathlib import Path

import pytest

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.json"))


def test_there_are_three_examples():
    assert len(EXAMPLES) == 3


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_example_forecasts(client, path):
    scenario = json.loads(path.read_text())
    response = client.post("/v1/forecasts", json=scenario)
    assert response.status_code == 200, response.get_json()
    body = response.get_json()
    assert set(body["series"]["sensors"]) == {s["id"] for s in scenario["sensors"]}
    summary = body["summary"]
    # the peak cannot be below the warmest sensor, nor the differential below zero
    warmest = max(max(v) for v in body["series"]["sensors"].values())
    assert summary["peak_temperature_c"] >= warmest - 1e-3
    assert summary["max_differential_c"] >= 0.0
    assert body["numerics"]["energy_imbalance"] < 0.005
