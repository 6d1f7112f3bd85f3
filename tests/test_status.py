"""Site status of a stored pour (GET /v1/pours/{id}/status and `pourheat watch`): measured and
forecast verdicts apart, the planned removal from the scenario, the time since placement now,
how old the newest reading is, no `None` in the status line, and a missing readings file is a
file error."""

import copy
import json
from datetime import UTC, datetime, timedelta

import pytest

from service import cli
from service.app import create_app
from service.monitoring import STALE_READINGS_H, pour_status, status_line
from tests.conftest import CONTRACT_SCENARIO

HOURS_SINCE_PLACEMENT = 30.0
LAST_READING_H = 20


@pytest.fixture
def client(tmp_path):
    return create_app({"TESTING": True, "DATABASE": str(tmp_path / "s.sqlite3")}).test_client()


def _scenario() -> dict:
    scenario = copy.deepcopy(CONTRACT_SCENARIO)
    scenario["element"]["thickness_m"] = 1.0
    scenario["faces"]["top"]["insulation_removal_h"] = 150
    scenario["sensors"] = [{"id": "T1", "depth_m": 0.05}, {"id": "T2", "depth_m": 0.5}]
    scenario["limits"] = {"max_temperature_c": 90, "max_differential_c": 19}
    return scenario


def _pour_with_readings(client) -> tuple[str, datetime]:
    """A pour placed 30 h ago whose logger sent hourly readings (the plan's own values) up to
    20 h after placement and then stopped."""
    placed = datetime.now(UTC).replace(microsecond=0) - timedelta(hours=HOURS_SINCE_PLACEMENT)
    created = client.post(
        "/v1/pours",
        json={"name": "Mat B", "placed_at": placed.isoformat(), "scenario": _scenario()},
    )
    assert created.status_code == 201, created.get_json()
    pour = created.get_json()["id"]
    plan = client.post("/v1/forecasts", json=_scenario()).get_json()["series"]["sensors"]
    lines = ["time,sensor,temperature_c"]
    for h in range(1, LAST_READING_H + 1):
        stamp = (placed + timedelta(hours=h)).isoformat()
        lines += [f"{stamp},{s},{plan[s][h]:.2f}" for s in ("T1", "T2")]
    posted = client.post(
        f"/v1/pours/{pour}/readings", data="\n".join(lines) + "\n", content_type="text/csv"
    )
    assert posted.status_code == 200, posted.get_json()
    return pour, placed


def test_status_reports_now_reading_age_planned_removal_and_separate_verdicts(client):
    pour, _ = _pour_with_readings(client)
    status = client.get(f"/v1/pours/{pour}/status").get_json()
    assert status["now_h"] == pytest.approx(HOURS_SINCE_PLACEMENT, abs=0.1)  # now, not 20 h
    assert status["latest_reading_h"] == pytest.approx(LAST_READING_H)
    assert status["latest_reading_age_h"] == pytest.approx(10.0, abs=0.1)
    assert status["readings_stale"] is True  # 10 h > 2 h: the logger stopped
    assert status["planned_removals"] == [{"face": "top", "what": "insulation", "at_h": 150}]
    assert status["limits_measured_exceeded"] == []
    line = status_line(status)
    assert "None" not in line
    assert "top insulation at 150 h" in line and "not planned" not in line
    assert "measured within limits" in line
    assert "READINGS STALE" in line and "10 h old" in line


def _body(verdicts: dict[str, str]) -> dict:
    met = {"met": True, "exceeded": False, "unsettled": None}
    return {
        "summary": {
            "peak_temperature_c": 60.0,
            "peak_time_h": 40.0,
            "max_differential_c": 15.0,
            "limits": {
                key: {"limit_c": limit, "met": met[v], "verdict": v}
                for (key, limit), v in zip(
                    {"max_temperature_c": 70.0, "max_differential_c": 19.0}.items(),
                    verdicts.values(),
                    strict=True,
                )
            },
        },
        "calibration": {},
        "earliest_insulation_removal_h": None,
        "cautions": [],
    }


def _reading(hours: float, sensor: str, value: float) -> dict:
    return {"hours": hours, "sensor": sensor, "temperature_c": value}


POUR = {"id": "p1", "name": "Mat C", "placed_at": datetime(2026, 11, 2, 12, tzinfo=UTC)}


def test_measured_and_forecast_exceedances_are_told_apart():
    now = POUR["placed_at"] + timedelta(hours=24.5)
    readings = [_reading(24.0, "T1", 41.0), _reading(24.0, "T2", 63.0)]  # 22 C apart
    pour = {**POUR, "scenario": {"faces": {}}}
    measured = pour_status(pour, readings, _body({"t": "met", "d": "met"}), now)
    assert measured["limits_measured_exceeded"] == ["max_differential_c"]
    assert measured["limits_forecast_exceeded"] == [] and measured["limits_met"] is False
    line = status_line(measured)
    assert "MEASURED LIMIT EXCEEDED (differential)" in line and "forecast within limits" in line
    assert "no removal planned" in line and "None" not in line

    calm = [_reading(24.0, "T1", 50.0), _reading(24.0, "T2", 55.0)]
    forecast = pour_status(pour, calm, _body({"t": "exceeded", "d": "met"}), now)
    assert forecast["limits_measured_exceeded"] == []
    assert forecast["limits_forecast_exceeded"] == ["max_temperature_c"]
    line = status_line(forecast)
    assert "measured within limits" in line and "FORECAST TO EXCEED (max temperature)" in line
    assert forecast["readings_stale"] is False  # 0.5 h old

    unsettled = pour_status(pour, calm, _body({"t": "met", "d": "unsettled"}), now)
    assert unsettled["limits_met"] is False
    assert "NOT SETTLED" in status_line(unsettled)


def test_no_readings_yet_never_prints_none():
    now = POUR["placed_at"] + timedelta(hours=STALE_READINGS_H + 1)
    status = pour_status({**POUR, "scenario": {}}, [], _body({"t": "met", "d": "met"}), now)
    line = status_line(status)
    assert "None" not in line and "no readings yet" in line
    assert status["readings_stale"] is True


def test_watch_missing_readings_file_is_a_file_error(tmp_path, capsys, monkeypatch):
    def no_server(*args, **kwargs):  # the file must be checked before any request
        raise AssertionError("no request expected")

    monkeypatch.setattr(cli, "_http", no_server)
    missing = tmp_path / "logger.csv"
    assert cli.main(["watch", "--pour", "p1", "--readings", str(missing)]) == 2
    err = capsys.readouterr().err
    assert str(missing) in err and "cannot reach" not in err


def test_status_contract_has_no_unknown_fields(client):
    """The status body validates against the published schema (extra fields forbidden)."""
    from service.responses import PourStatusOut

    pour, _ = _pour_with_readings(client)
    PourStatusOut.model_validate(client.get(f"/v1/pours/{pour}/status").get_json())
    json.dumps(client.get(f"/v1/pours/{pour}/forecast").get_json()["latest_reading_h"])


def test_plan_summary_never_prints_none():
    """A plan without a target temperature (or without an ice amount) prints no `None`."""
    no_target = {"fresh_concrete_c": 30.0, "target_c": None, "note": "no target"}
    no_ice = {"fresh_concrete_c": 30.0, "target_c": 17.0, "ice_kg_m3": None, "chilled_water_c": 2}
    for pre in (no_target, no_ice):
        assert "None" not in cli.format_plan({"controls": {}, "precooling": pre})
