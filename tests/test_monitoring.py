"""Monitoring a stored pour: readings made by the model from a 'true' pour whose heat and top
insulation differ from the plan; re-forecast, status, idempotent re-posting, cron exit codes."""

import copy
import json

import numpy as np
import pytest

from service import cli
from service.app import create_app
from tests.conftest import CONTRACT_SCENARIO

PLACED_AT = "2026-11-02T07:00:00-05:00"  # 12:00 UTC
SENSORS = [
    {"id": "T1", "depth_m": 0.05},
    {"id": "T2", "depth_m": 1.0},
    {"id": "T3", "depth_m": 1.95},
]


@pytest.fixture
def app(database_url):
    """The app with a fresh database, once per store backend (SQLite, PostgreSQL)."""
    return create_app({"TESTING": True, "DATABASE": database_url})


@pytest.fixture
def client(app):
    return app.test_client()


def _plan():
    scenario = copy.deepcopy(CONTRACT_SCENARIO)
    scenario["sensors"] = SENSORS
    scenario["duration_h"] = 168
    return scenario


def _truth_csv(client, hours=48):
    """Hourly readings of the true pour (Hu +12 %, top insulation half as good), 0.15 C noise."""
    truth = _plan()
    truth["mix"]["hydration"]["total_heat_j_kg"] *= 1.12
    truth["faces"]["top"]["insulation_r_m2k_w"] = 0.25
    body = client.post("/v1/forecasts", json=truth).get_json()
    rng = np.random.default_rng(5)
    lines = ["time,sensor,temperature_c"]
    for h in range(1, hours + 1):
        day, hour = divmod(12 + h, 24)
        stamp = f"2026-11-{2 + day:02d}T{hour:02d}:00:00Z"
        for sensor in ("T1", "T2", "T3"):
            value = body["series"]["sensors"][sensor][h] + rng.normal(0.0, 0.15)
            lines.append(f"{stamp},{sensor},{value:.2f}")
    return "\n".join(lines) + "\n", body["summary"]


def _create(client):
    response = client.post(
        "/v1/pours", json={"name": "Mat A", "placed_at": PLACED_AT, "scenario": _plan()}
    )
    assert response.status_code == 201
    return response.get_json()["id"]


def test_reforecast_moves_to_the_truth(client):
    pour = _create(client)
    planned = client.get(f"/v1/pours/{pour}/forecast").get_json()
    assert planned["calibration"]["readings_used"] == 0
    assert "planned" in planned["calibration"]["status"]
    csv_text, truth = _truth_csv(client)
    posted = client.post(f"/v1/pours/{pour}/readings", data=csv_text, content_type="text/csv")
    assert posted.get_json()["accepted"] == 144
    again = client.post(f"/v1/pours/{pour}/readings", data=csv_text, content_type="text/csv")
    assert again.get_json() == {
        "accepted": 0, "duplicates": 144, "conflicts": 0, "conflict_rows": [], "replaced": 0,
        "rejected": [], "rejected_count": 0,
    }  # fmt: skip
    body = client.get(f"/v1/pours/{pour}/forecast").get_json()
    calibration = body["calibration"]
    assert calibration["readings_used"] == 144
    assert calibration["rms_c"] < 0.3
    assert set(calibration["rms_by_sensor_c"]) == {"T1", "T2", "T3"}
    peak_truth = truth["peak_temperature_c"]
    assert body["summary"]["peak_temperature_c"] == pytest.approx(peak_truth, abs=1.0)
    assert abs(planned["summary"]["peak_temperature_c"] - peak_truth) > 3.0
    assert body["latest_reading_h"] == pytest.approx(48.0)
    for key in ("summary", "series", "cautions"):
        assert key in body


def test_status_and_chart(client):
    pour = _create(client)
    csv_text, _ = _truth_csv(client, hours=24)
    client.post(f"/v1/pours/{pour}/readings", data=csv_text, content_type="text/csv")
    status = client.get(f"/v1/pours/{pour}/status").get_json()
    assert status["latest_reading_h"] == pytest.approx(24.0)
    assert status["measured_max_c"] > status["measured_differential_c"] > 0
    assert status["limit_forecast_exceeded"] is True  # the true pour runs past 70 C
    assert status["limits_met"] is False
    chart = client.get(f"/v1/pours/{pour}/forecast?format=svg")
    assert chart.status_code == 200 and chart.data.startswith(b"<?xml")
    assert b"Sensor T1" in chart.data


def test_unknown_pour_is_404(client):
    assert client.get("/v1/pours/nope/forecast").status_code == 404
    assert client.get("/v1/pours/nope/status").status_code == 404


def test_watch_posts_readings_and_exits_3_on_a_limit(app, client, tmp_path, monkeypatch, capsys):
    pour = _create(client)
    csv_text, _ = _truth_csv(client, hours=24)
    path = tmp_path / "logger.csv"
    path.write_text(csv_text)
    test_client = app.test_client()

    def via_test_client(method, url, data=None, content_type=None):
        route = url.split("127.0.0.1:8000", 1)[1]
        response = test_client.open(route, method=method, data=data, content_type=content_type)
        text = response.get_data(as_text=True)
        try:
            return response.status_code, json.loads(text)
        except ValueError:
            return response.status_code, text

    monkeypatch.setattr(cli, "_http", via_test_client)
    code = cli.main(["watch", "--pour", pour, "--readings", str(path)])
    out = capsys.readouterr().out
    assert code == 3
    assert "72 new" in out and "LIMIT EXCEEDED" in out
    assert cli.main(["watch", "--pour", "nope"]) == 2


def test_pour_responses_match_the_contract(client):
    """The stored-pour responses validate against openapi/openapi.yaml."""
    from pathlib import Path

    import yaml
    from openapi_schema_validator import OAS31Validator

    spec = yaml.safe_load(
        (Path(__file__).resolve().parents[1] / "openapi" / "openapi.yaml").read_text()
    )

    def check(name, body):
        schema = {"$ref": f"#/components/schemas/{name}", "components": spec["components"]}
        assert not [e.message for e in OAS31Validator(schema).iter_errors(body)], name

    pour = _create(client)
    check("PourListOut", client.get("/v1/pours").get_json())
    csv_text, _ = _truth_csv(client, hours=12)
    check(
        "ReadingsReportOut",
        client.post(
            f"/v1/pours/{pour}/readings", data=csv_text, content_type="text/csv"
        ).get_json(),
    )
    check("ReadingsOut", client.get(f"/v1/pours/{pour}/readings").get_json())
    check("PourForecastOut", client.get(f"/v1/pours/{pour}/forecast").get_json())
    check("PourStatusOut", client.get(f"/v1/pours/{pour}/status").get_json())


def test_watch_sends_the_token_from_the_environment(monkeypatch):
    """`pourheat watch` puts POURHEAT_TOKEN in the Authorization header (read via urllib)."""
    import urllib.request

    seen = {}

    class Response:
        status = 200

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            return False

        def read(self):
            return b"{}"

    def fake_urlopen(request, timeout):
        seen["authorization"] = request.get_header("Authorization")
        return Response()

    monkeypatch.setenv("POURHEAT_TOKEN", "s3cret-token-for-tests")
    monkeypatch.setattr(urllib.request, "urlopen", fake_urlopen)
    assert cli._http("GET", "http://127.0.0.1:8000/healthz") == (200, {})
    assert seen["authorization"] == "Bearer s3cret-token-for-tests"


def test_show_pour_carries_the_latest_status(client):
    pour = _create(client)
    assert client.get(f"/v1/pours/{pour}").get_json()["latest_status"] is None
    csv_text, _ = _truth_csv(client, hours=12)
    client.post(f"/v1/pours/{pour}/readings", data=csv_text, content_type="text/csv")
    status = client.get(f"/v1/pours/{pour}/status").get_json()
    shown = client.get(f"/v1/pours/{pour}").get_json()["latest_status"]
    assert shown["latest_reading_h"] == status["latest_reading_h"] == pytest.approx(12.0)
    assert shown["computed_at"].endswith("Z")


def test_stuck_and_offset_sensors_are_named_in_the_forecast_and_the_status(client):
    """Four sensors; the true pour (Hu +12 %, top insulation half as good) is read with T2
    stuck at 30.0 C from 10 h and T4 reading 2 C high, hours 20-25 dropped. Reference: the
    true pour's own forecast (POST /v1/forecasts). Both sensors are named with their reason in
    `calibration.suspect_sensors` and in the status; the peak is still within 1 C."""
    plan = _plan()
    plan["sensors"] = [*SENSORS, {"id": "T4", "depth_m": 1.5}]
    truth = copy.deepcopy(plan)
    truth["mix"]["hydration"]["total_heat_j_kg"] *= 1.12
    truth["faces"]["top"]["insulation_r_m2k_w"] = 0.25
    true_body = client.post("/v1/forecasts", json=truth).get_json()
    rng = np.random.default_rng(9)
    readings = []
    for h in [h for h in range(1, 37) if not 20 <= h < 26]:
        day, hour = divmod(12 + h, 24)
        for sensor in ("T1", "T2", "T3", "T4"):
            value = true_body["series"]["sensors"][sensor][h] + rng.normal(0.0, 0.15)
            value = 30.0 if sensor == "T2" and h >= 10 else value + 2.0 * (sensor == "T4")
            readings.append(
                {
                    "time": f"2026-11-{2 + day:02d}T{hour:02d}:00:00Z",
                    "sensor": sensor,
                    "temperature_c": round(value, 1),
                }
            )
    pour = client.post(
        "/v1/pours", json={"name": "Mat B", "placed_at": PLACED_AT, "scenario": plan}
    ).get_json()["id"]
    client.post(f"/v1/pours/{pour}/readings", json={"readings": readings})
    body = client.get(f"/v1/pours/{pour}/forecast").get_json()
    suspects = {s["sensor"]: s for s in body["calibration"]["suspect_sensors"]}
    assert {k: s["reason"] for k, s in suspects.items()} == {"T2": "stuck", "T4": "offset"}
    assert suspects["T4"]["median_error_c"] == pytest.approx(2.0, abs=0.3)
    assert body["calibration"]["loss"] == "huber"
    peak_truth = true_body["summary"]["peak_temperature_c"]
    assert body["summary"]["peak_temperature_c"] == pytest.approx(peak_truth, abs=1.0)
    status = client.get(f"/v1/pours/{pour}/status").get_json()
    assert [(s["sensor"], s["reason"]) for s in status["suspect_sensors"]] == [
        ("T2", "stuck"),
        ("T4", "offset"),
    ]
