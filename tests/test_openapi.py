"""The OpenAPI contract: committed file = generated document, valid OpenAPI 3.1, and real
responses match it (openapi-spec-validator and openapi-schema-validator from PyPI)."""

from pathlib import Path

import pytest
import yaml
from openapi_schema_validator import OAS31Validator
from openapi_spec_validator import validate

from service.openapi import build_spec

SPEC_FILE = Path(__file__).resolve().parents[1] / "openapi" / "openapi.yaml"


@pytest.fixture(scope="module")
def spec():
    return yaml.safe_load(SPEC_FILE.read_text())


def _validator(spec, name):
    schema = {"$ref": f"#/components/schemas/{name}", "components": spec["components"]}
    return OAS31Validator(schema)


def test_committed_file_is_the_generated_document(spec):
    # regenerate with: python -m service.openapi > openapi/openapi.yaml
    assert spec == yaml.safe_load(yaml.safe_dump(build_spec(), sort_keys=False))


def test_document_is_valid_openapi_31(spec):
    validate(spec)
    assert spec["openapi"].startswith("3.1")


def test_served_document_equals_the_file(client, spec):
    response = client.get("/openapi.json")
    assert response.status_code == 200
    assert response.get_json() == spec


def test_every_request_field_has_a_description(spec):
    for name, schema in spec["components"]["schemas"].items():
        for field, prop in schema.get("properties", {}).items():
            assert prop.get("description"), f"{name}.{field} has no description"


def test_forecast_response_matches_the_contract(client, contract_scenario, spec):
    contract_scenario["sensors"] = [{"id": "S1", "depth_m": 1.0}]
    body = client.post("/v1/forecasts", json=contract_scenario).get_json()
    errors = list(_validator(spec, "ForecastOut").iter_errors(body))
    assert not errors, [e.message for e in errors]


@pytest.mark.parametrize(
    "payload",
    [
        {"element": {"shape": "slab", "thickness_m": -1}},
        {"element": {"shape": "slab", "thickness_m": 1}, "unknown": 1},
    ],
)
def test_problem_responses_match_the_contract(client, payload, spec):
    response = client.post("/v1/forecasts", json=payload)
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"
    errors = list(_validator(spec, "ProblemOut").iter_errors(response.get_json()))
    assert not errors, [e.message for e in errors]


def test_plan_and_comparison_responses_match_the_contract(client, contract_scenario, spec):
    contract_scenario["duration_h"] = 72
    plan = client.post(
        "/v1/plans", json={"scenario": contract_scenario, "solve_for": ["max_thickness_m"]}
    ).get_json()
    assert not list(_validator(spec, "PlanOut").iter_errors(plan))
    comparison = client.post(
        "/v1/comparisons",
        json={
            "base": contract_scenario,
            "variants": {"cool": {"placement": {"temperature_c": 15}}},
        },
    ).get_json()
    assert not list(_validator(spec, "ComparisonOut").iter_errors(comparison))
    contract_scenario["uncertainty"] = {"samples": 8}
    band = client.post("/v1/forecasts", json=contract_scenario).get_json()
    assert not list(_validator(spec, "ForecastOut").iter_errors(band))


def test_strength_and_cracking_response_matches_the_contract(client, contract_scenario, spec):
    contract_scenario["duration_h"] = 72
    contract_scenario["strength"] = {
        "ultimate_mpa": 45,
        "tau_h": 30,
        "beta": 0.8,
        "targets_mpa": [10, 60],
    }
    contract_scenario["cracking"] = {}
    body = client.post("/v1/forecasts", json=contract_scenario).get_json()
    assert not [e.message for e in _validator(spec, "ForecastOut").iter_errors(body)]
