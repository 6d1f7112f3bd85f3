"""What real clients get: the GET web query's default format, content negotiation (406), strict
inputs (booleans, tiny dimensions, repeated keys and parameters) and reported precision (no
float noise in JSON, CSV, text, charts, plans and comparisons)."""

import copy
import csv
import io
import json
import re

import pytest

from service.cli import format_summary

GET = (
    "/v1/forecasts?shape=slab&thickness_m=1.2&cement_kg_m3=380&water_kg_m3=160&placement_c=20"
    "&air_mean_c=18&air_range_c=10&top_r_m2k_w=0.5&duration_h=48"
)
BROWSER_ACCEPT = "text/html,application/xhtml+xml,application/xml;q=0.9,image/webp,*/*;q=0.8"


def short(scenario: dict) -> dict:
    scenario = copy.deepcopy(scenario)
    scenario["duration_h"] = 48
    return scenario


# --- 1. the GET web query answers CSV unless another format is asked for ----------------------


@pytest.mark.parametrize("accept", [None, "*/*", BROWSER_ACCEPT, "text/*", "text/csv"])
def test_get_answers_csv_to_spreadsheet_and_browser_accept_headers(client, accept):
    headers = {"Accept": accept} if accept else {}
    response = client.get(GET, headers=headers)
    assert response.status_code == 200
    assert response.mimetype == "text/csv"
    assert response.get_data(as_text=True).startswith("time_h,core_c,")


@pytest.mark.parametrize(
    ("accept", "query", "media"),
    [
        ("application/json", "", "application/json"),
        ("application/json, text/csv;q=0.5", "", "application/json"),
        ("*/*", "&format=json", "application/json"),
        ("text/csv", "&format=svg", "image/svg+xml"),
    ],
)
def test_get_answers_another_format_only_when_asked(client, accept, query, media):
    response = client.get(GET + query, headers={"Accept": accept})
    assert response.status_code == 200
    assert response.mimetype == media


def test_get_tie_between_csv_and_json_is_csv(client):
    response = client.get(GET, headers={"Accept": "application/json, text/csv"})
    assert response.mimetype == "text/csv"


def test_post_keeps_json_as_default(client, contract_scenario):
    for accept in (None, "*/*", BROWSER_ACCEPT):
        headers = {"Accept": accept} if accept else {}
        response = client.post("/v1/forecasts", json=short(contract_scenario), headers=headers)
        assert response.mimetype == "application/json", accept


@pytest.mark.parametrize(
    ("method", "url", "accept"),
    [
        ("get", GET, "text/html"),
        ("get", GET, "text/csv;q=0, application/json;q=0, */*;q=0"),
        ("get", GET + "&value=peak_temperature_c", "application/json"),
        ("post", "/v1/forecasts", "text/html"),
        ("post", "/v1/comparisons", "image/png"),
    ],
)
def test_accept_that_no_offered_format_satisfies_is_406(
    client, contract_scenario, method, url, accept
):
    body = short(contract_scenario)
    if url == "/v1/comparisons":
        body = {"base": body, "variants": {"warm": {"placement": {"temperature_c": 25}}}}
    kwargs = {"json": body} if method == "post" else {}
    response = getattr(client, method)(url, headers={"Accept": accept}, **kwargs)
    assert response.status_code == 406
    assert response.mimetype == "application/problem+json"
    assert response.get_json()["status"] == 406


# --- 13. strict inputs ------------------------------------------------------------------------


def fields(response) -> list[str]:
    assert response.status_code == 422, response.get_data(as_text=True)
    return [e["field"] for e in response.get_json()["errors"]]


@pytest.mark.parametrize(
    ("path", "value"),
    [
        (("element", "thickness_m"), True),
        (("element", "thickness_m"), 5e-324),
        (("element", "thickness_m"), 0.001),
        (("element", "thickness_m"), "2"),
        (("placement", "temperature_c"), False),
        (("duration_h",), True),
    ],
)
def test_booleans_strings_and_tiny_dimensions_are_422_naming_the_field(
    client, contract_scenario, path, value
):
    scenario = short(contract_scenario)
    target = scenario
    for key in path[:-1]:
        target = target[key]
    target[path[-1]] = value
    assert fields(client.post("/v1/forecasts", json=scenario)) == [".".join(path)]


def test_boolean_in_an_hourly_list_is_422(client, contract_scenario):
    scenario = short(contract_scenario)
    scenario["ambient"]["air_temperature_c"] = [20.0] * 48 + [True]
    assert "ambient.air_temperature_c.48" in fields(client.post("/v1/forecasts", json=scenario))


def test_boolean_in_us_units_is_422_naming_the_us_field(client, contract_scenario):
    scenario = short(contract_scenario)
    scenario["element"] = {"shape": "slab", "thickness_ft": True}
    response = client.post("/v1/forecasts?units=us", json=scenario)
    assert fields(response) == ["element.thickness_ft"]


@pytest.mark.parametrize(
    "query", ["&thickness_m=0.001", "&thickness_m=5e-324", "&thickness_m=true"]
)
def test_get_dimensions_are_bounded(client, query):
    url = GET.replace("thickness_m=1.2", query.lstrip("&"))
    assert fields(client.get(url)) == ["thickness_m"]


def test_repeated_query_parameter_is_422_naming_it(client):
    response = client.get(GET + "&thickness_m=2")
    assert fields(response) == ["thickness_m"]


@pytest.mark.parametrize(
    ("url", "text", "field"),
    [
        ("/v1/forecasts", '{"duration_h": 48, "duration_h": 24}', "duration_h"),
        ("/v1/forecasts", '{"faces": {"top": {"adiabatic": false, "adiabatic": true}}}',
         "faces.top.adiabatic"),
        ("/v1/forecasts", '{"sensors": [{"id": "A", "id": "B"}]}', "sensors.0.id"),
        ("/v1/plans", '{"scenario": {"element": {"shape": "slab", "shape": "slab"}}}',
         "scenario.element.shape"),
        ("/v1/pours", '{"name": "a", "name": "b"}', "name"),
    ],
)  # fmt: skip
def test_repeated_json_key_is_422_naming_its_path(client, url, text, field):
    response = client.post(url, data=text, content_type="application/json")
    assert fields(response) == [field]


# --- 3. precision: no float noise, JSON booleans in CSV ----------------------------------------

NOISE = re.compile(r"\d\.\d{7,}|\d{7,}\.\d+|\d\.\d{4,}e")
"""A number printed with float noise (31.414877083036835, 494852.00000000006, 1.23456e-05)."""


def assert_no_noise(text: str) -> None:
    found = NOISE.findall(text)
    assert not found, found


def exceeding(scenario: dict) -> dict:
    """A mat whose differential exceeds 19 C: no insulation, a cold night, mix estimated."""
    scenario = short(scenario)
    del scenario["mix"]["hydration"]
    scenario["faces"] = {}
    scenario["ambient"] = {"daily_min_c": 2.0, "daily_max_c": 12.0, "wind_m_s": 4.0}
    return scenario


def test_forecast_outputs_have_no_float_noise(client, contract_scenario):
    scenario = exceeding(contract_scenario)
    body = client.post("/v1/forecasts", json=scenario).get_json()
    limit = body["summary"]["limits"]["max_differential_c"]
    assert limit["met"] is False and limit["first_exceeded_h"] is not None
    for units in ("si", "us"):
        text = client.post(f"/v1/forecasts?units={units}", json=scenario).get_data(as_text=True)
        assert_no_noise(text)
        shown = json.loads(text)
        assert_no_noise(format_summary(shown, "F" if units == "us" else "C"))
        csv_text = client.post(f"/v1/forecasts?units={units}&format=csv", json=scenario)
        assert_no_noise(csv_text.get_data(as_text=True))
        svg = client.post(f"/v1/forecasts?units={units}&format=svg", json=scenario)
        assert_no_noise(re.sub(r"<path[^>]*>|<use[^>]*>|d=\"[^\"]*\"", "", svg.get_data(True)))
        labels = re.findall(r"exceeded at ([\d.]+) h", svg.get_data(as_text=True))
        assert all(len(x.split(".")[-1]) <= 2 for x in labels), labels
    summary = body["summary"]
    for key in ("peak_temperature_c", "max_differential_c", "peak_time_h"):
        assert summary[key] == round(summary[key], 2)
    assert limit["first_exceeded_h"] == round(limit["first_exceeded_h"], 2)
    assert all(v == round(v, 2) for v in body["series"]["core_c"])
    assert body["hydration"]["total_heat_j_kg"] == float(
        f"{body['hydration']['total_heat_j_kg']:.6g}"
    )


def test_comparison_csv_writes_booleans_as_json_does(client, contract_scenario):
    body = {
        "base": short(contract_scenario),
        "variants": {"bare": {"faces": {"top": {"insulation_r_m2k_w": 0}}}},
    }
    response = client.post("/v1/comparisons?format=csv", json=body)
    assert response.status_code == 200
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True))))
    for row in rows:
        for limit in ("max_temperature_c", "max_differential_c"):
            # met is true/false as JSON writes it; empty (JSON null) only when not settled
            expected = {"met": "true", "exceeded": "false", "unsettled": ""}
            assert row[f"{limit}_met"] == expected[row[f"{limit}_verdict"]]
    assert_no_noise(response.get_data(as_text=True))
    assert_no_noise(client.post("/v1/comparisons", json=body).get_data(as_text=True))


def test_plan_values_to_their_tolerance_and_no_noise(client, contract_scenario):
    scenario = short(contract_scenario)
    scenario["duration_h"] = 72
    response = client.post(
        "/v1/plans",
        json={"scenario": scenario, "solve_for": ["max_placement_temperature_c"]},
    )
    assert response.status_code == 200
    assert_no_noise(response.get_data(as_text=True))
    answer = response.get_json()["controls"]["max_placement_temperature_c"]
    assert answer["status"] == "found"
    assert answer["value"] == round(answer["value"], 2)  # tolerance 0.25 C: two decimals


def test_near_surface_depth_must_lie_inside_the_element(client, contract_scenario):
    scenario = short(contract_scenario)
    scenario["element"]["thickness_m"] = 0.1
    scenario["near_surface_depth_m"] = 0.3
    assert fields(client.post("/v1/forecasts", json=scenario)) == ["near_surface_depth_m"]


def test_command_line_refuses_a_repeated_key(tmp_path, capsys):
    from service.cli import main

    path = tmp_path / "twice.json"
    path.write_text('{"duration_h": 48, "duration_h": 24}', encoding="utf-8")
    assert main(["forecast", str(path)]) == 2
    assert "duration_h" in capsys.readouterr().err
