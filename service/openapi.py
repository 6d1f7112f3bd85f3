"""The OpenAPI 3.1 description of the service, built from the pydantic schemas.

``python -m service.openapi`` writes openapi/openapi.yaml, the committed contract; the tests
check that the committed file is exactly what this module builds, that it validates, and that
real responses match it. The app serves the same document at GET /openapi.json.
"""

import json
import sys
from functools import cache
from typing import Any

from pydantic.json_schema import models_json_schema

from service.responses import ComparisonOut, ForecastOut, PlanOut, ProblemOut
from service.schemas import ComparisonIn, PlanIn, UncertainScenarioIn
from service.spreadsheet import SpreadsheetQueryIn

REF = "#/components/schemas/{model}"
PROBLEM = {"application/problem+json": {"schema": {"$ref": "#/components/schemas/ProblemOut"}}}
UNITS_PARAMETER = {
    "name": "units",
    "in": "query",
    "required": False,
    "description": "si (default) or us: US customary names and values (F, ft, in, lb/yd3, mph, "
    "h ft2 F/Btu ...); field suffixes change, e.g. thickness_m -> thickness_ft, "
    "temperature_c -> temperature_f. Hours stay hours.",
    "schema": {"type": "string", "enum": ["si", "us"], "default": "si"},
    "example": "si",
}
CAUTION = (
    "Forecasts are estimates: limits come from the governing specification and the engineer of "
    "record; confirm by monitoring and follow local codes and licensed practice."
)


def _problems(*codes: int) -> dict[str, Any]:
    reasons = {
        400: "Malformed JSON or not a JSON object",
        413: "Request body too large",
        422: "Invalid input: each field named in `errors`",
    }
    return {str(c): {"description": reasons[c], "content": PROBLEM} for c in codes}


def _query_parameters() -> list[dict[str, Any]]:
    schema = SpreadsheetQueryIn.model_json_schema(ref_template=REF)
    required = set(schema.get("required", []))
    params = []
    for name, prop in schema["properties"].items():
        prop = dict(prop)
        description = prop.pop("description", "")
        examples = prop.pop("examples", None)
        prop.pop("title", None)
        param = {
            "name": name,
            "in": "query",
            "required": name in required,
            "description": description,
            "schema": prop,
        }
        if examples:
            param["example"] = examples[0]
        params.append(param)
    return params


@cache
def build_spec() -> dict[str, Any]:
    """The OpenAPI document as a dict."""
    _, definitions = models_json_schema(
        [
            (UncertainScenarioIn, "validation"),
            (PlanIn, "validation"),
            (ComparisonIn, "validation"),
            (ForecastOut, "serialization"),
            (PlanOut, "serialization"),
            (ComparisonOut, "serialization"),
            (ProblemOut, "serialization"),
        ],
        ref_template=REF,
    )
    forecast_content = {
        "application/json": {"schema": {"$ref": "#/components/schemas/ForecastOut"}},
        "text/csv": {
            "schema": {"type": "string"},
            "example": "time_h,core_c,surface_c,differential_c\n0.0,20.0,20.0,0.0\n",
        },
        "image/svg+xml": {"schema": {"type": "string"}},
        "image/png": {"schema": {"type": "string", "contentMediaType": "image/png"}},
    }
    format_parameter = {
        "name": "format",
        "in": "query",
        "required": False,
        "description": "Response format, instead of the Accept header",
        "schema": {"type": "string", "enum": ["json", "csv", "svg", "png"]},
        "example": "csv",
    }
    value_parameter = {
        "name": "value",
        "in": "query",
        "required": False,
        "description": "Return only this summary field as text/plain, e.g. "
        "peak_temperature_c, for a spreadsheet cell",
        "schema": {"type": "string"},
        "example": "peak_temperature_c",
    }
    return {
        "openapi": "3.1.0",
        "info": {
            "title": "pourheat",
            "version": "1",
            "description": "Temperature forecasts for curing mass concrete: peak temperature, "
            "near-surface temperature and core-to-surface differential. " + CAUTION,
        },
        "paths": {
            "/healthz": {
                "get": {
                    "summary": "Liveness",
                    "operationId": "healthz",
                    "responses": {
                        "200": {
                            "description": "Serving",
                            "content": {
                                "application/json": {
                                    "schema": {
                                        "type": "object",
                                        "properties": {"status": {"const": "ok"}},
                                        "required": ["status"],
                                    }
                                }
                            },
                        }
                    },
                }
            },
            "/openapi.json": {
                "get": {
                    "summary": "This document",
                    "operationId": "openapi",
                    "responses": {
                        "200": {
                            "description": "OpenAPI 3.1 document",
                            "content": {"application/json": {"schema": {"type": "object"}}},
                        }
                    },
                }
            },
            "/v1/forecasts": {
                "post": {
                    "summary": "Forecast a placement",
                    "description": "Runs the scenario and returns the summary, series and "
                    "cautions. " + CAUTION,
                    "operationId": "createForecast",
                    "parameters": [UNITS_PARAMETER, format_parameter],
                    "requestBody": {
                        "required": True,
                        "content": {
                            "application/json": {
                                "schema": {"$ref": "#/components/schemas/UncertainScenarioIn"}
                            }
                        },
                    },
                    "responses": {
                        "200": {"description": "The forecast", "content": forecast_content},
                        **_problems(400, 413, 422),
                    },
                },
                "get": {
                    "summary": "Forecast from flat query parameters (spreadsheet web query)",
                    "description": "Returns the series as CSV, or with `value` one summary "
                    "number as text/plain. " + CAUTION,
                    "operationId": "queryForecast",
                    "parameters": [*_query_parameters(), value_parameter, UNITS_PARAMETER],
                    "responses": {
                        "200": {
                            "description": "CSV series or one value",
                            "content": {
                                "text/csv": forecast_content["text/csv"],
                                "text/plain": {"schema": {"type": "string"}, "example": "66.79"},
                            },
                        },
                        **_problems(422),
                    },
                },
            },
            "/v1/plans": {
                "post": {
                    "summary": "Solve for the controls that keep a pour inside its limits",
                    "description": "Each control is a bracketed root search (brentq) on whole "
                    "forecasts; the answer meets the limits and one tolerance beyond misses them. "
                    + CAUTION,
                    "operationId": "createPlan",
                    "requestBody": {
                        "required": True,
                        "content": {
                            "application/json": {"schema": {"$ref": "#/components/schemas/PlanIn"}}
                        },
                    },
                    "responses": {
                        "200": {
                            "description": "One answer per control",
                            "content": {
                                "application/json": {
                                    "schema": {"$ref": "#/components/schemas/PlanOut"}
                                }
                            },
                        },
                        **_problems(400, 413, 422),
                    },
                }
            },
            "/v1/comparisons": {
                "post": {
                    "summary": "Compare variants of a scenario side by side",
                    "description": "Variants are partial overrides merged into the base; the "
                    "forecasts run in parallel. " + CAUTION,
                    "operationId": "createComparison",
                    "parameters": [
                        {**format_parameter, "schema": {"type": "string", "enum": ["json", "csv"]}}
                    ],
                    "requestBody": {
                        "required": True,
                        "content": {
                            "application/json": {
                                "schema": {"$ref": "#/components/schemas/ComparisonIn"}
                            }
                        },
                    },
                    "responses": {
                        "200": {
                            "description": "One row per variant",
                            "content": {
                                "application/json": {
                                    "schema": {"$ref": "#/components/schemas/ComparisonOut"}
                                },
                                "text/csv": {"schema": {"type": "string"}},
                            },
                        },
                        **_problems(400, 413, 422),
                    },
                }
            },
        },
        "components": {"schemas": definitions["$defs"]},
    }


def main() -> None:
    """Write the document as YAML to stdout (needs PyYAML, part of the test extra)."""
    import yaml

    spec = json.loads(json.dumps(build_spec()))
    sys.stdout.write("# Generated by `python -m service.openapi`; do not edit by hand.\n")
    yaml.safe_dump(spec, sys.stdout, sort_keys=False, allow_unicode=True, width=100)


if __name__ == "__main__":
    main()
