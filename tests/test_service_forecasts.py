"""HTTP tests for GET /healthz and POST /v1/forecasts (DESIGN.md, "The part of the HTTP contract
that external checks use"): the contract example, CSV output, sensors, estimated hydration,
hourly weather, sections, and the problem-details errors for bad input.
"""

import csv
import io
import json
import math

import pytest
from flask import request_finished

from service.app import create_app

URL = "/v1/forecasts"
PROBLEM_JSON = "application/problem+json"
SERIES_KEYS = ("time_h", "core_c", "surface_c", "differential_c")
ROUNDING_C = 0.011
"""Series are rounded to 0.01 C each, so a difference of two may be off by up to 0.01 C."""


@pytest.fixture(autouse=True)
def no_server_errors(app):
    """Fail any test in which the app answered a request with a 5xx status."""
    statuses = []

    def record(sender, response, **extra):
        statuses.append(response.status_code)

    with request_finished.connected_to(record, app):
        yield
    assert all(status < 500 for status in statuses), statuses


def short(scenario, hours=48):
    """The scenario with a shorter forecast where the full 168 h is not needed."""
    scenario["duration_h"] = hours
    return scenario


def post_raw(client, payload):
    """POST ``payload`` as raw JSON text; NaN and infinity are written as NaN and Infinity."""
    return client.post(URL, data=json.dumps(payload), content_type="application/json")


def assert_problem(response, status):
    assert response.status_code == status
    assert response.mimetype == PROBLEM_JSON
    body = response.get_json(force=True)
    assert body["status"] == status
    return body


def test_healthz(client):
    response = client.get("/healthz")
    assert response.status_code == 200
    assert response.get_json() == {"status": "ok"}


# --- the contract example -------------------------------------------------------------------


def test_contract_example(client, contract_scenario):
    response = client.post(URL, json=contract_scenario)
    assert response.status_code == 200
    assert response.mimetype == "application/json"
    body = response.get_json()

    summary = body["summary"]
    for key in (
        "peak_temperature_c",
        "peak_time_h",
        "max_differential_c",
        "max_differential_time_h",
    ):
        assert isinstance(summary[key], float | int), key
    assert 0 <= summary["peak_time_h"] <= 168
    assert 0 <= summary["max_differential_time_h"] <= 168

    series = body["series"]
    time_h = series["time_h"]
    assert {len(series[key]) for key in SERIES_KEYS} == {len(time_h)}
    assert time_h[0] == 0
    assert time_h[-1] == 168
    assert time_h == pytest.approx([float(h) for h in range(169)])
    for core, surface, diff in zip(
        series["core_c"], series["surface_c"], series["differential_c"], strict=True
    ):
        assert diff == pytest.approx(core - surface, abs=ROUNDING_C)
    assert max(series["core_c"]) <= summary["peak_temperature_c"] + ROUNDING_C
    assert max(series["differential_c"]) <= summary["max_differential_c"] + ROUNDING_C

    cautions = body["cautions"]
    assert isinstance(cautions, list) and cautions
    text = " ".join(cautions).lower()
    assert "specification" in text
    assert "engineer of record" in text


@pytest.mark.parametrize(
    ("limit_key", "value_key", "series_key", "default"),
    [
        ("max_temperature_c", "peak_temperature_c", "core_c", 70.0),
        ("max_differential_c", "max_differential_c", "differential_c", 19.0),
    ],
)
def test_contract_limits_match_series(
    client, contract_scenario, limit_key, value_key, series_key, default
):
    body = client.post(URL, json=contract_scenario).get_json()
    summary, series = body["summary"], body["series"]
    status = summary["limits"][limit_key]
    limit, value = status["limit_c"], summary[value_key]
    assert limit == default

    assert status["verdict"] == ("exceeded" if value > limit else status["verdict"])
    assert status["met"] is {"met": True, "exceeded": False, "unsettled": None}[status["verdict"]]
    assert status["margin_c"] == pytest.approx(limit - value, abs=1e-3)
    # first_exceeded_h comes from every solver step, so it falls in the reporting interval that
    # ends at the first reported time above the limit.
    exceeded = [t for t, v in zip(series["time_h"], series[series_key], strict=True) if v > limit]
    if exceeded:
        assert exceeded[0] - 1.0 < status["first_exceeded_h"] <= exceeded[0]
    else:
        assert status["first_exceeded_h"] is None
    if status["met"] is False:  # exceeded (null: not settled, not above the limit yet)
        assert status["first_exceeded_h"] is not None


@pytest.mark.parametrize(
    "request_kwargs",
    [
        pytest.param({"headers": {"Accept": "text/csv"}}, id="accept-header"),
        pytest.param({"query_string": {"format": "csv"}}, id="format-query"),
    ],
)
def test_csv_matches_json_series(client, contract_scenario, request_kwargs):
    scenario = short(contract_scenario)
    series = client.post(URL, json=scenario).get_json()["series"]

    response = client.post(URL, json=scenario, **request_kwargs)
    assert response.status_code == 200
    assert response.mimetype == "text/csv"
    rows = list(csv.reader(io.StringIO(response.get_data(as_text=True))))
    header, data = rows[0], rows[1:]
    assert header[:4] == list(SERIES_KEYS)
    assert len(data) == len(series["time_h"])
    for i, row in enumerate(data):
        for column, key in enumerate(SERIES_KEYS):
            assert float(row[column]) == pytest.approx(series[key][i], abs=1e-9), (i, key)


# --- sensors ----------------------------------------------------------------------------------


def test_sensors_near_top_and_at_adiabatic_bottom(client, contract_scenario):
    scenario = short(contract_scenario)
    scenario["sensors"] = [
        {"id": "S1", "depth_m": 0.05},
        {"id": "MID", "depth_m": 1.0},
        {"id": "BOTTOM", "depth_m": 2.0},
    ]
    response = client.post(URL, json=scenario)
    assert response.status_code == 200
    series = response.get_json()["series"]
    sensors = series["sensors"]
    assert set(sensors) == {"S1", "MID", "BOTTOM"}
    assert all(len(values) == len(series["time_h"]) for values in sensors.values())

    # the top is the only exposed face, so 50 mm below it is the near-surface point
    assert sensors["S1"] == pytest.approx(series["surface_c"], abs=0.01)
    # the adiabatic bottom is the hottest point once hydration is under way
    later = [i for i, t in enumerate(series["time_h"]) if t >= 24]
    assert later
    for i in later:
        assert sensors["BOTTOM"][i] == pytest.approx(series["core_c"][i], abs=0.05)
        assert sensors["BOTTOM"][i] >= sensors["MID"][i] >= sensors["S1"][i]


# --- hydration estimated from the mix ---------------------------------------------------------


@pytest.mark.parametrize("cement_type", [None, "type_i", "type_iii"])
def test_hydration_estimated_from_cement_preset(client, contract_scenario, cement_type):
    scenario = short(contract_scenario)
    del scenario["mix"]["hydration"]
    if cement_type is not None:
        scenario["mix"]["cement_type"] = cement_type
    response = client.post(URL, json=scenario)
    assert response.status_code == 200
    hydration = response.get_json()["hydration"]
    assert hydration["origin"].startswith("estimated")


def test_unknown_cement_type(client, contract_scenario):
    scenario = short(contract_scenario)
    del scenario["mix"]["hydration"]
    scenario["mix"]["cement_type"] = "type_x"
    body = assert_problem(client.post(URL, json=scenario), 422)
    assert "mix.cement_type" in [e["field"] for e in body["errors"]]


# --- hourly weather ---------------------------------------------------------------------------


def test_hourly_air_temperature(client, contract_scenario):
    air = [round(20.0 + 5.0 * math.sin(2 * math.pi * h / 24), 3) for h in range(169)]
    contract_scenario["ambient"]["air_temperature_c"] = air
    response = client.post(URL, json=contract_scenario)
    assert response.status_code == 200
    series = response.get_json()["series"]
    assert series["time_h"][-1] == 168
    assert series["air_c"] == pytest.approx(air, abs=0.005)  # reported to 0.01 C


@pytest.mark.parametrize("length", [1, 100, 168])
def test_hourly_air_temperature_too_short(client, contract_scenario, length):
    contract_scenario["ambient"]["air_temperature_c"] = [20.0] * length
    body = assert_problem(client.post(URL, json=contract_scenario), 422)
    messages = " ".join(e["message"] for e in body["errors"])
    assert "169" in messages
    assert [e["field"] for e in body["errors"]] == ["ambient.air_temperature_c"]


# --- sections ---------------------------------------------------------------------------------


def section_scenario(scenario):
    scenario = short(scenario)
    scenario["element"] = {"shape": "section", "width_m": 1.0, "height_m": 3.0}
    scenario["faces"] = {
        "top": {"insulation_r_m2k_w": 0.5},
        "bottom": {"adiabatic": True},
        "sides": {"formwork_r_m2k_w": 0.1},
    }
    return scenario


def test_section_reports_exposed_faces(client, contract_scenario):
    response = client.post(URL, json=section_scenario(contract_scenario))
    assert response.status_code == 200
    series = response.get_json()["series"]
    faces = series["faces_c"]
    assert "top" in faces
    assert "bottom" not in faces  # adiabatic
    assert {"left", "right"} & set(faces)
    assert all(len(values) == len(series["time_h"]) for values in faces.values())
    # the near-surface temperature is the coolest of the faces' inset values
    for i, surface in enumerate(series["surface_c"]):
        assert surface == pytest.approx(min(v[i] for v in faces.values()), abs=ROUNDING_C)


def test_section_reports_every_exposed_side(client, contract_scenario):
    response = client.post(URL, json=section_scenario(contract_scenario))
    assert set(response.get_json()["series"]["faces_c"]) == {"top", "left", "right"}


def test_limit_just_below_the_peak_has_a_first_exceeded_time(client, contract_scenario):
    # The peak may fall between reported times; the limit status must still say when.
    scenario = section_scenario(contract_scenario)
    body = client.post(URL, json=scenario).get_json()
    peak = body["summary"]["peak_temperature_c"]
    # the reported peak is rounded to 0.01 C: 0.01 C below it is below the true peak
    scenario["limits"] = {"max_temperature_c": round(peak - 0.01, 4)}
    status = client.post(URL, json=scenario).get_json()["summary"]["limits"]["max_temperature_c"]
    assert status["met"] is False
    assert status["first_exceeded_h"] is not None


# --- invalid input: 422 problem details naming the field --------------------------------------


def _set(path, value):
    """A mutator setting scenario[path] (dotted) to ``value``."""
    *parents, leaf = path.split(".")

    def mutate(scenario):
        for key in parents:
            scenario = scenario[key]
        scenario[leaf] = value

    return mutate


def _delete(key):
    def mutate(scenario):
        del scenario[key]

    return mutate


INVALID = [
    ("negative-thickness", _set("element.thickness_m", -1.0), "element.thickness_m"),
    ("zero-thickness", _set("element.thickness_m", 0), "element.thickness_m"),
    ("string-thickness", _set("element.thickness_m", "abc"), "element.thickness_m"),
    ("alpha-u-above-1", _set("mix.hydration.alpha_u", 1.5), "mix.hydration.alpha_u"),
    ("nan-duration", _set("duration_h", float("nan")), "duration_h"),
    ("infinite-duration", _set("duration_h", float("inf")), "duration_h"),
    ("negative-duration", _set("duration_h", -5), "duration_h"),
    ("unknown-top-level-field", _set("colour", "grey"), "colour"),
    ("unknown-face-field", _set("faces.top.colour", "grey"), "faces.top.colour"),
    ("w-cm-too-low", _set("mix.water_kg_m3", 20), "mix.water_kg_m3"),
    ("sensor-below-bottom", _set("sensors", [{"id": "S1", "depth_m": 5.0}]), "sensors.0.depth_m"),
    ("missing-placement", _delete("placement"), "placement"),
    ("negative-wind", _set("ambient.wind_m_s", -1.0), "ambient.wind_m_s"),
    ("nan-wind", _set("ambient.wind_m_s", float("nan")), "ambient.wind_m_s"),
    ("empty-hourly-air", _set("ambient.air_temperature_c", []), "ambient.air_temperature_c"),
]


@pytest.mark.parametrize(("mutate", "field"), [pytest.param(m, f, id=i) for i, m, f in INVALID])
def test_invalid_scenario_is_422_problem(client, contract_scenario, mutate, field):
    scenario = short(contract_scenario)
    mutate(scenario)
    body = assert_problem(post_raw(client, scenario), 422)
    errors = body["errors"]
    assert isinstance(errors, list) and errors
    for error in errors:
        assert set(error) == {"field", "message"}
        assert isinstance(error["field"], str) and error["field"]
        assert isinstance(error["message"], str) and error["message"]
    fields = [e["field"] for e in errors]
    assert any(f == field or f.startswith(field + ".") for f in fields), fields


@pytest.mark.parametrize(
    ("mutate", "field"),
    [
        pytest.param(m, f, id=i)
        for i, m, f in [
            *INVALID,
            (
                "short-hourly-air",
                _set("ambient.air_temperature_c", [20.0] * 10),
                "ambient.air_temperature_c",
            ),
        ]
    ],
)
def test_invalid_scenario_names_exact_field(client, contract_scenario, mutate, field):
    scenario = short(contract_scenario)
    mutate(scenario)
    response = post_raw(client, scenario)
    assert response.status_code == 422
    assert field in [e["field"] for e in response.get_json(force=True)["errors"]]


# --- requests that are not a JSON scenario ----------------------------------------------------


@pytest.mark.parametrize(
    ("data", "content_type"),
    [
        pytest.param("{not json", "application/json", id="malformed-json"),
        pytest.param('{"element": ', "application/json", id="truncated-json"),
        pytest.param("", "application/json", id="empty-body"),
        pytest.param("element=slab", "application/x-www-form-urlencoded", id="form"),
        pytest.param(None, "text/plain", id="json-as-text-plain"),
    ],
)
def test_not_a_json_body_is_400(client, contract_scenario, data, content_type):
    body = json.dumps(contract_scenario) if data is None else data
    response = client.post(URL, data=body, content_type=content_type)
    assert_problem(response, 400)


def test_body_too_large_is_413(contract_scenario):
    app = create_app({"TESTING": True, "MAX_CONTENT_LENGTH": 1000})
    contract_scenario["ambient"]["air_temperature_c"] = [20.0] * 169
    data = json.dumps(contract_scenario)
    assert len(data) > 1000
    response = app.test_client().post(URL, data=data, content_type="application/json")
    assert_problem(response, 413)
