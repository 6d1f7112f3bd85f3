"""``units=us`` on every endpoint that returns temperatures: honoured (comparisons, a pour, its
readings, its forecast and status) or refused with a 422 naming ``units`` (plans, uploads);
cautions quote the limits in the units of the response."""

import copy
import csv
import io
from datetime import UTC, datetime, timedelta

import pytest

from service.app import create_app
from tests.conftest import CONTRACT_SCENARIO

PLACED_AT = (datetime.now(UTC) - timedelta(hours=30)).replace(minute=0, second=0, microsecond=0)


def _z(moment: datetime) -> str:
    return moment.astimezone(UTC).replace(tzinfo=None).isoformat(timespec="seconds") + "Z"


def f_of(c: float) -> float:
    """Degrees F of a temperature in C (NIST SP 811, B.9: T_F = 1.8 T_C + 32)."""
    return c * 1.8 + 32.0


def scenario() -> dict:
    s = copy.deepcopy(CONTRACT_SCENARIO)
    s["duration_h"] = 72
    s["sensors"] = [{"id": "S1", "depth_m": 1.0}]
    return s


@pytest.fixture
def client(tmp_path):
    return create_app({"TESTING": True, "DATABASE": str(tmp_path / "u.sqlite3")}).test_client()


@pytest.fixture
def pour_id(client):
    created = client.post(
        "/v1/pours", json={"name": "US", "placed_at": _z(PLACED_AT), "scenario": scenario()}
    )
    assert created.status_code == 201, created.get_data(as_text=True)
    pid = created.get_json()["id"]
    rows = [
        {"time": _z(PLACED_AT + timedelta(hours=h)), "sensor": "S1", "temperature_c": 20.0 + h}
        for h in range(0, 25, 6)
    ]
    assert client.post(f"/v1/pours/{pid}/readings", json={"readings": rows}).status_code == 200
    return pid


def assert_cautions_in_f(cautions: list[str]) -> None:
    text = " ".join(cautions)
    assert "158 F" in text and "34.2 F" in text
    assert "70 C" not in text and "19 C" not in text


def assert_units_refused(response) -> None:
    assert response.status_code == 422
    assert [e["field"] for e in response.get_json()["errors"]] == ["units"]


def test_forecast_cautions_quote_limits_in_f(client):
    body = client.post("/v1/forecasts?units=us", json=scenario()).get_json()
    assert_cautions_in_f(body["cautions"])
    csv_response = client.post("/v1/forecasts?units=us&format=csv", json=scenario())
    assert "158 F" in csv_response.headers["Pourheat-Caution"]


def test_comparisons_in_us_units(client):
    base = scenario()
    variants = {"warm": {"placement": {"temperature_f": 77.0}}}
    si = client.post(
        "/v1/comparisons",
        json={"base": base, "variants": {"warm": {"placement": {"temperature_c": 25.0}}}},
    ).get_json()
    us = client.post("/v1/comparisons?units=us", json={"base": base, "variants": variants})
    assert us.status_code == 200, us.get_data(as_text=True)
    body = us.get_json()
    for si_row, us_row in zip(si["rows"], body["rows"], strict=True):
        assert us_row["peak_temperature_f"] == pytest.approx(
            f_of(si_row["peak_temperature_c"]), abs=0.01
        )
        assert us_row["max_differential_f"] == pytest.approx(
            1.8 * si_row["max_differential_c"], abs=0.01
        )
        assert "peak_temperature_c" not in us_row
    assert_cautions_in_f(body["cautions"])
    text = client.post(
        "/v1/comparisons?units=us&format=csv", json={"base": base, "variants": variants}
    ).get_data(as_text=True)
    header = next(csv.reader(io.StringIO(text)))
    assert "peak_temperature_f" in header and "peak_temperature_c" not in header


def test_plans_refuse_us_units(client):
    body = {"scenario": scenario(), "solve_for": ["max_placement_temperature_c"]}
    assert_units_refused(client.post("/v1/plans?units=us", json=body))


def test_uploads_refuse_us_units(client, pour_id):
    payload = {"name": "x", "placed_at": _z(PLACED_AT), "scenario": scenario()}
    assert_units_refused(client.post("/v1/pours?units=us", json=payload))
    rows = {"readings": [{"time": _z(PLACED_AT), "sensor": "S1", "temperature_c": 20.0}]}
    assert_units_refused(client.post(f"/v1/pours/{pour_id}/readings?units=us", json=rows))


def test_readings_in_us_units(client, pour_id):
    si = client.get(f"/v1/pours/{pour_id}/readings").get_json()["readings"]
    us = client.get(f"/v1/pours/{pour_id}/readings?units=us").get_json()["readings"]
    assert [r["temperature_f"] for r in us] == [pytest.approx(f_of(r["temperature_c"])) for r in si]
    text = client.get(f"/v1/pours/{pour_id}/readings?units=us&format=csv").get_data(True)
    rows = list(csv.DictReader(io.StringIO(text)))
    assert float(rows[0]["temperature_f"]) == pytest.approx(f_of(si[0]["temperature_c"]))


def test_pour_forecast_status_and_scenario_in_us_units(client, pour_id):
    si = client.get(f"/v1/pours/{pour_id}/forecast").get_json()
    us = client.get(f"/v1/pours/{pour_id}/forecast?units=us").get_json()
    assert us["summary"]["peak_temperature_f"] == pytest.approx(
        f_of(si["summary"]["peak_temperature_c"]), abs=0.01
    )
    assert_cautions_in_f(us["cautions"])
    status_si = client.get(f"/v1/pours/{pour_id}/status").get_json()
    status_us = client.get(f"/v1/pours/{pour_id}/status?units=us").get_json()
    assert status_us["forecast_peak_f"] == pytest.approx(
        f_of(status_si["forecast_peak_c"]), abs=0.01
    )
    assert status_us["measured_max_f"] == pytest.approx(f_of(status_si["measured_max_c"]))
    assert_cautions_in_f(status_us["cautions"])
    shown = client.get(f"/v1/pours/{pour_id}?units=us").get_json()
    assert shown["scenario"]["element"]["thickness_ft"] == pytest.approx(2.0 / 0.3048)
    assert shown["scenario"]["placement"]["temperature_f"] == pytest.approx(68.0)


@pytest.mark.parametrize(
    "url", ["/v1/pours/{id}/status", "/v1/pours/{id}/readings", "/v1/pours/{id}/forecast"]
)
def test_unknown_units_are_422(client, pour_id, url):
    assert_units_refused(client.get(url.format(id=pour_id) + "?units=imperial"))
