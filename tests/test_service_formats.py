"""Formats and the spreadsheet query: charts, CSV and single values, the index page."""

import csv
import io

import pytest

URL = "/v1/forecasts"
QUERY = (
    "/v1/forecasts?shape=slab&thickness_m=1.5&cement_kg_m3=360&water_kg_m3=155"
    "&placement_c=18&air_mean_c=15&air_range_c=10&top_r_m2k_w=0.5&duration_h=48"
)


@pytest.mark.parametrize(
    ("how", "media", "magic"),
    [
        ({"query_string": {"format": "svg"}}, "image/svg+xml", b"<?xml"),
        ({"headers": {"Accept": "image/png"}}, "image/png", b"\x89PNG"),
    ],
)
def test_chart_formats(client, contract_scenario, how, media, magic):
    contract_scenario["duration_h"] = 48
    response = client.post(URL, json=contract_scenario, **how)
    assert response.status_code == 200
    assert response.mimetype == media
    assert response.data.startswith(magic)


def test_unknown_format_is_422_naming_format(client, contract_scenario):
    response = client.post(URL, json=contract_scenario, query_string={"format": "xls"})
    assert response.status_code == 422
    assert response.get_json()["errors"][0]["field"] == "format"


def test_spreadsheet_query_returns_csv(client):
    response = client.get(QUERY)
    assert response.status_code == 200
    assert response.mimetype == "text/csv"
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True))))
    assert len(rows) == 49
    assert float(rows[0]["core_c"]) == 18.0


def test_spreadsheet_value_equals_the_json_summary(client):
    value = client.get(QUERY + "&value=peak_temperature_c")
    assert value.status_code == 200
    assert value.mimetype == "text/plain"
    payload = {
        "element": {"shape": "slab", "thickness_m": 1.5},
        "mix": {"cement_kg_m3": 360, "water_kg_m3": 155},
        "placement": {"temperature_c": 18},
        "ambient": {"daily_min_c": 10, "daily_max_c": 20, "wind_m_s": 2.0},
        "faces": {"top": {"insulation_r_m2k_w": 0.5}},
        "ground": {"deep_temperature_c": 15},
        "duration_h": 48,
    }
    summary = client.post(URL, json=payload).get_json()["summary"]
    assert float(value.get_data(as_text=True)) == summary["peak_temperature_c"]


@pytest.mark.parametrize(
    ("query", "field"),
    [
        (QUERY + "&value=colour", "value"),
        (QUERY.replace("thickness_m=1.5&", ""), "thickness_m"),
        (QUERY.replace("cement_kg_m3=360", "cement_kg_m3=abc"), "cement_kg_m3"),
        (QUERY + "&bogus=1", "bogus"),
        (QUERY + "&units=metric", "units"),
    ],
)
def test_spreadsheet_errors_name_the_parameter(client, query, field):
    response = client.get(query)
    assert response.status_code == 422
    assert field in [e["field"] for e in response.get_json()["errors"]]


def test_index_page_links_the_api(client):
    response = client.get("/")
    assert response.status_code == 200
    text = response.get_data(as_text=True)
    assert "/openapi.json" in text and "engineer of record" in text


def test_us_units_round_trip_the_contract(client, contract_scenario):
    """The contract slab posted in US units gives the SI forecast converted (NIST SP 811)."""
    from service.units import request_to_us

    si = client.post(URL, json=contract_scenario).get_json()
    us = client.post(URL, json=request_to_us(contract_scenario), query_string={"units": "us"})
    assert us.status_code == 200
    summary = us.get_json()["summary"]
    assert summary["peak_temperature_f"] == pytest.approx(
        si["summary"]["peak_temperature_c"] * 1.8 + 32, abs=0.01
    )
    assert summary["max_differential_f"] == pytest.approx(
        si["summary"]["max_differential_c"] * 1.8, abs=0.01
    )


def test_us_units_errors_name_the_us_field(client, contract_scenario):
    from service.units import request_to_us

    payload = request_to_us(contract_scenario)
    payload["element"]["thickness_ft"] = -3
    response = client.post(URL, json=payload, query_string={"units": "us"})
    assert response.status_code == 422
    assert "element.thickness_ft" in [e["field"] for e in response.get_json()["errors"]]


def test_us_spreadsheet_value(client):
    query = (
        "/v1/forecasts?units=us&shape=slab&thickness_ft=5&cement_lb_yd3=600&water_lb_yd3=260"
        "&placement_f=65&air_mean_f=60&air_range_f=18&top_r_hft2f_btu=3&duration_h=48"
        "&value=peak_temperature_f"
    )
    response = client.get(query)
    assert response.status_code == 200
    assert 65.0 < float(response.get_data(as_text=True)) < 212.0


def test_csv_and_values_carry_the_caution_header(client):
    for query in (QUERY, QUERY + "&value=max_differential_c"):
        response = client.get(query)
        assert "engineer of record" in response.headers["Pourheat-Caution"]


def test_compute_budget_refuses_with_advice(app, contract_scenario):
    """A grid x steps beyond the configured budget is a 422 that says how to coarsen."""
    app.config["MAX_CELL_STEPS"] = 1000
    response = app.test_client().post(URL, json=contract_scenario)
    assert response.status_code == 422
    error = response.get_json()["errors"][0]
    assert error["field"] == "resolution"
    assert "coarsen" in error["message"] and "max_cell_m" in error["message"]


def test_wall_clock_cap_gives_503_with_retry_after(app, contract_scenario, monkeypatch):
    """A computation past FORECAST_TIMEOUT_S is stopped and refused, never left hanging. (The
    budget refuses at once what it expects to run past the cap; it is bypassed here so that
    the computation starts and meets the cap.)"""
    app.config["FORECAST_TIMEOUT_S"] = 0.1  # the budget estimates about 0.4 s for this slab
    client = app.test_client()
    refused = client.post(URL, json=contract_scenario)
    assert refused.status_code == 422
    assert "POURHEAT_FORECAST_TIMEOUT_S" in refused.get_json()["errors"][0]["message"]
    for module in ("service.forecasting", "service.planning"):
        monkeypatch.setattr(f"{module}.check_budget", lambda *args, **kwargs: None)
    app.config["FORECAST_TIMEOUT_S"] = 1e-9
    for response in (
        client.post(URL, json=contract_scenario),
        client.post(
            "/v1/plans", json={"scenario": contract_scenario, "solve_for": ["max_thickness_m"]}
        ),
    ):
        assert response.status_code == 503
        assert response.mimetype == "application/problem+json"
        assert int(response.headers["Retry-After"]) > 0
