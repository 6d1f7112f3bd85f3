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

from service.responses import (
    ComparisonOut,
    ForecastOut,
    JobOut,
    PlanOut,
    PourCreatedOut,
    PourForecastOut,
    PourListOut,
    PourStatusOut,
    ProblemOut,
    ReadingsOut,
    ReadingsReportOut,
)
from service.schemas import ComparisonIn, PlanIn, PourIn, ReadingsIn, UncertainScenarioIn
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
SI_ONLY_PARAMETER = {
    **UNITS_PARAMETER,
    "description": "si only: this endpoint does not offer US customary units (units=us is a "
    "422 naming `units`)",
    "schema": {"type": "string", "enum": ["si"], "default": "si"},
}
STRICT_NOTE = (
    "Inputs are strict: a boolean or a string is not a number; a JSON object that repeats a key "
    "(at any depth) and a query parameter given more than once are 422s naming them. Formats "
    "are chosen by `format=` or by Accept (the offered type with the highest quality, the "
    "endpoint's default on ties and for */*); an Accept that no offered type satisfies is a "
    "406."
)
CAUTION = (
    "Forecasts are estimates: limits come from the governing specification and the engineer of "
    "record; confirm by monitoring and follow local codes and licensed practice."
)

AUTH_NOTE = (
    "Access: when the operator configures tokens (POURHEAT_TOKENS), requests that change stored "
    "pours (POST /v1/pours, POST /v1/pours/{pour_id}/readings, DELETE /v1/pours/{pour_id}) need "
    "`Authorization: Bearer <token>` (the `bearer` security scheme), as does DELETE "
    "/v1/jobs/{job_id}, and so do all other "
    "requests when POURHEAT_AUTH_READS=true; /healthz, / and /openapi.json stay open. Without a "
    "valid token the answer is 401 with a WWW-Authenticate challenge."
)


SIZE_PARAMETER = {
    "name": "size",
    "in": "query",
    "required": False,
    "description": "Chart size: screen (PNG 910 px wide) or a4 (PNG at 300 dpi across an A4 "
    "page's text width); SVG is the same drawing",
    "schema": {"type": "string", "enum": ["screen", "a4"]},
    "example": "screen",
}
PDF_CONTENT = {
    "application/pdf": {"schema": {"type": "string", "contentMediaType": "application/pdf"}}
}
HTML = {"text/html": {"schema": {"type": "string"}}}
TEXT = {"text/plain": {"schema": {"type": "string"}}}
BOARD_NOTE = (
    " HTML for people (server-rendered, refreshes itself). When reads need a token, a browser "
    "signs in at /board/login and gets a signed cookie for the board."
)


def _board_paths() -> dict[str, Any]:
    """The site board's HTML pages, chart images and report."""
    found = {"description": "No such pour", "content": PROBLEM}
    page = {"description": "The page", "content": HTML}
    return {
        "/board": {
            "get": {
                "summary": "Site board: stored pours with their status",
                "description": "Status in words and colour, age of the newest reading, peak "
                "so far and forecast, next planned removal." + BOARD_NOTE,
                "operationId": "boardIndex",
                "responses": {"200": page, "303": {"description": "Sign in first"}},
            }
        },
        "/board/pours/{pour_id}": {
            "parameters": [POUR_ID],
            "get": {
                "summary": "Site board: one pour",
                "description": "Chart, latest reading of each sensor, calibration, planned "
                "removals and cautions." + BOARD_NOTE,
                "operationId": "boardPour",
                "responses": {
                    "200": page,
                    "303": {"description": "Sign in first"},
                    "404": found,
                },
            },
        },
        "/board/pours/{pour_id}/chart.{fmt}": {
            "parameters": [
                POUR_ID,
                {
                    "name": "fmt",
                    "in": "path",
                    "required": True,
                    "description": "svg or png",
                    "schema": {"type": "string", "enum": ["svg", "png"]},
                },
            ],
            "get": {
                "summary": "Site board: the pour's chart",
                "operationId": "boardChart",
                "parameters": [SIZE_PARAMETER],
                "responses": {
                    "200": {
                        "description": "The chart with the readings",
                        "content": {
                            "image/svg+xml": {"schema": {"type": "string"}},
                            "image/png": {
                                "schema": {"type": "string", "contentMediaType": "image/png"}
                            },
                        },
                    },
                    "401": {"description": "Sign in first", "content": TEXT},
                    "404": found,
                    **_problems(422, 503),
                },
            },
        },
        "/board/pours/{pour_id}/report.pdf": {
            "parameters": [POUR_ID],
            "get": {
                "summary": "Site board: the pour's PDF report",
                "operationId": "boardReport",
                "responses": {
                    "200": {"description": "The report", "content": PDF_CONTENT},
                    "401": {"description": "Sign in first", "content": TEXT},
                    "404": found,
                    **_problems(422, 503),
                },
            },
        },
        "/board/login": {
            "get": {
                "summary": "Site board: sign-in form",
                "operationId": "boardLoginForm",
                "responses": {"200": page, "303": {"description": "No sign-in needed"}},
            },
            "post": {
                "summary": "Site board: sign in with an API token",
                "description": "A configured token sets a signed cookie (HttpOnly, "
                "SameSite=Strict, Path=/board, Secure behind TLS) for BOARD_SESSION_HOURS.",
                "operationId": "boardLogin",
                "requestBody": {
                    "required": True,
                    "content": {
                        "application/x-www-form-urlencoded": {
                            "schema": {
                                "type": "object",
                                "properties": {
                                    "token": {"type": "string"},
                                    "next": {"type": "string"},
                                },
                                "required": ["token"],
                            }
                        }
                    },
                },
                "responses": {
                    "303": {"description": "Signed in (or no sign-in needed)"},
                    "401": {"description": "Not a valid token", "content": HTML},
                },
            },
        },
        "/board/logout": {
            "post": {
                "summary": "Site board: sign out",
                "operationId": "boardLogout",
                "responses": {"303": {"description": "Signed out"}},
            }
        },
    }


PREFER = {
    "name": "Prefer",
    "in": "header",
    "required": False,
    "description": "respond-async (RFC 7240): run the request as a job; the answer is 202 with "
    "Location: /v1/jobs/{job_id} (the request is checked first: bad input is still a 422 at "
    "once). Jobs have their own compute budget and time cap (POURHEAT_JOB_MAX_CELL_STEPS, "
    "POURHEAT_JOB_TIMEOUT_S).",
    "schema": {"type": "string"},
    "example": "respond-async",
}
JOB_ACCEPTED = {
    "202": {
        "description": "Queued as a job (Prefer: respond-async); Location says where to poll",
        "headers": {
            "Location": {"schema": {"type": "string"}, "description": "/v1/jobs/{job_id}"},
            "Preference-Applied": {"schema": {"type": "string", "const": "respond-async"}},
        },
        "content": {"application/json": {"schema": {"$ref": "#/components/schemas/JobOut"}}},
    }
}
JOB_ID = {
    "name": "job_id",
    "in": "path",
    "required": True,
    "description": "Job id",
    "schema": {"type": "string"},
    "example": "9b1deb4d3b7d4bad9bdd2b0d7b3dcb6d",
}


def _job_paths() -> dict[str, Any]:
    """/v1/jobs: state, result and cancellation of asynchronous jobs."""
    job = {"application/json": {"schema": {"$ref": "#/components/schemas/JobOut"}}}
    not_found = {"description": "No such job (or its record expired)", "content": PROBLEM}
    return {
        "/v1/jobs/{job_id}": {
            "parameters": [JOB_ID],
            "get": {
                "summary": "State, progress and timings of a job; its JSON result when done",
                "operationId": "getJob",
                "responses": {"200": {"description": "The job", "content": job}, "404": not_found},
            },
            "delete": {
                "summary": "Cancel a queued or running job, or delete an ended one",
                "operationId": "deleteJob",
                "responses": {
                    "200": {"description": "Cancelled", "content": job},
                    "204": {"description": "Deleted with its result"},
                    "404": not_found,
                },
            },
        },
        "/v1/jobs/{job_id}/result": {
            "parameters": [JOB_ID],
            "get": {
                "summary": "The body the synchronous call would have given, in any of its "
                "formats (Accept or format=); a failed job answers its problem details",
                "operationId": "getJobResult",
                "parameters": [
                    {
                        "name": "format",
                        "in": "query",
                        "required": False,
                        "description": "As for the synchronous call: json, csv, svg, png or pdf",
                        "schema": {
                            "type": "string",
                            "enum": ["json", "csv", "svg", "png", "pdf"],
                        },
                        "example": "csv",
                    }
                ],
                "responses": {
                    "200": {
                        "description": "The result",
                        "content": {
                            "application/json": {"schema": {"type": "object"}},
                            "text/csv": {"schema": {"type": "string"}},
                            "image/svg+xml": {"schema": {"type": "string"}},
                            "image/png": {
                                "schema": {"type": "string", "contentMediaType": "image/png"}
                            },
                        },
                    },
                    "404": not_found,
                    "409": {"description": "Not ended yet, or cancelled", "content": PROBLEM},
                    "410": {"description": "The result has expired", "content": PROBLEM},
                    **_problems(406, 422, 503),
                },
            },
        },
    }


REPLACE_PARAMETER = {
    "name": "replace",
    "in": "query",
    "required": False,
    "description": "Overwrite stored values the upload contradicts (the way to correct a wrong "
    "reading)",
    "schema": {"type": "boolean", "default": False},
    "example": False,
}


def _problems(*codes: int) -> dict[str, Any]:
    reasons = {
        400: "Malformed JSON or not a JSON object",
        406: "None of the offered media types is acceptable",
        413: "Request body too large",
        415: "Unsupported request media type",
        422: "Invalid input: each field named in `errors`",
        503: "The computation hit the wall-clock cap; Retry-After says when to try again",
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


def _json(name: str) -> dict[str, Any]:
    return {"application/json": {"schema": {"$ref": f"#/components/schemas/{name}"}}}


POUR_ID = {
    "name": "pour_id",
    "in": "path",
    "required": True,
    "description": "Pour id",
    "schema": {"type": "string"},
    "example": "3f9c2a7d81b4",
}


def _pour_paths() -> dict[str, Any]:
    """Stored pours, readings, calibrated re-forecasts and status."""
    csv_readings = {
        "schema": {"type": "string"},
        "example": "time,sensor,temperature_c\n2026-11-02T13:00:00Z,S1,31.2\n",
    }
    return {
        "/v1/pours": {
            "post": {
                "summary": "Store a pour to monitor",
                "operationId": "createPour",
                "parameters": [SI_ONLY_PARAMETER],
                "requestBody": {"required": True, "content": _json("PourIn")},
                "responses": {
                    "201": {
                        "description": "Stored; Location gives its URL",
                        "content": _json("PourCreatedOut"),
                    },
                    **_problems(400, 413, 422),
                },
            },
            "get": {
                "summary": "List stored pours",
                "operationId": "listPours",
                "parameters": [
                    {
                        "name": "archived",
                        "in": "query",
                        "required": False,
                        "description": "Include archived pours",
                        "schema": {"type": "boolean"},
                        "example": False,
                    }
                ],
                "responses": {
                    "200": {"description": "Pours", "content": _json("PourListOut")},
                    **_problems(422),
                },
            },
        },
        "/v1/pours/{pour_id}": {
            "parameters": [POUR_ID],
            "get": {
                "summary": "A stored pour with its scenario, sensors and links",
                "operationId": "showPour",
                "parameters": [UNITS_PARAMETER],
                "responses": {
                    "200": {
                        "description": "The pour",
                        "content": {"application/json": {"schema": {"type": "object"}}},
                    },
                    "404": {"description": "No such pour", "content": PROBLEM},
                    **_problems(422),
                },
            },
            "delete": {
                "summary": "Archive a pour (nothing is deleted)",
                "operationId": "archivePour",
                "responses": {
                    "204": {"description": "Archived"},
                    "404": {"description": "No such pour", "content": PROBLEM},
                },
            },
        },
        "/v1/pours/{pour_id}/readings": {
            "parameters": [POUR_ID],
            "post": {
                "summary": "Store readings (JSON or CSV); duplicates are ignored, bad rows "
                "reported one by one",
                "operationId": "addReadings",
                "parameters": [SI_ONLY_PARAMETER, REPLACE_PARAMETER],
                "requestBody": {
                    "required": True,
                    "content": {**_json("ReadingsIn"), "text/csv": csv_readings},
                },
                "responses": {
                    "200": {
                        "description": "What was stored",
                        "content": _json("ReadingsReportOut"),
                    },
                    "404": {"description": "No such pour", "content": PROBLEM},
                    "409": {"description": "Archived pour", "content": PROBLEM},
                    **_problems(400, 413, 415, 422),
                },
            },
            "get": {
                "summary": "Stored readings, JSON or CSV",
                "operationId": "getReadings",
                "parameters": [
                    {
                        "name": n,
                        "in": "query",
                        "required": False,
                        "description": d,
                        "schema": {"type": "string"},
                        "example": e,
                    }
                    for n, d, e in (
                        ("from", "From this time (ISO 8601 with offset)", "2026-11-02T12:00:00Z"),
                        ("to", "Up to this time (ISO 8601 with offset)", "2026-11-04T12:00:00Z"),
                        ("sensor", "Only this sensor", "S1"),
                    )
                ]
                + [
                    UNITS_PARAMETER,
                    {
                        "name": "format",
                        "in": "query",
                        "required": False,
                        "description": "json (default) or csv",
                        "schema": {"type": "string", "enum": ["json", "csv"]},
                        "example": "csv",
                    },
                ],
                "responses": {
                    "200": {
                        "description": "Readings",
                        "content": {**_json("ReadingsOut"), "text/csv": csv_readings},
                    },
                    "404": {"description": "No such pour", "content": PROBLEM},
                    **_problems(406, 422),
                },
            },
        },
        "/v1/pours/{pour_id}/forecast": {
            "parameters": [POUR_ID],
            "get": {
                "summary": "Calibrate to the readings so far and forecast ahead",
                "description": "Fits Hu, tau and the top-face conductance (and with "
                "fit_placement=true the placement temperature) by bounded least squares "
                "to the readings, then forecasts with measured air temperatures where "
                "given. With no readings it is the planned forecast. " + CAUTION,
                "operationId": "forecastPour",
                "parameters": [
                    UNITS_PARAMETER,
                    {
                        "name": "fit_placement",
                        "in": "query",
                        "required": False,
                        "description": "Also fit the placement temperature",
                        "schema": {"type": "boolean"},
                        "example": False,
                    },
                    {
                        "name": "format",
                        "in": "query",
                        "required": False,
                        "description": "json, csv, svg or png (a chart with the readings), or "
                        "pdf (a printable report)",
                        "schema": {
                            "type": "string",
                            "enum": ["json", "csv", "svg", "png", "pdf"],
                        },
                        "example": "svg",
                    },
                    SIZE_PARAMETER,
                    PREFER,
                ],
                "responses": {
                    **JOB_ACCEPTED,
                    "200": {
                        "description": "The calibrated forecast",
                        "content": {
                            **_json("PourForecastOut"),
                            "text/csv": {"schema": {"type": "string"}},
                            "image/svg+xml": {"schema": {"type": "string"}},
                            "image/png": {
                                "schema": {"type": "string", "contentMediaType": "image/png"}
                            },
                            **PDF_CONTENT,
                        },
                    },
                    "404": {"description": "No such pour", "content": PROBLEM},
                    **_problems(406, 422, 503),
                },
            },
        },
        "/v1/pours/{pour_id}/status": {
            "parameters": [POUR_ID],
            "get": {
                "summary": "Compact status for dashboards",
                "operationId": "pourStatus",
                "parameters": [UNITS_PARAMETER],
                "responses": {
                    "200": {"description": "Status", "content": _json("PourStatusOut")},
                    "404": {"description": "No such pour", "content": PROBLEM},
                    **_problems(406, 422, 503),
                },
            },
        },
    }


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
            (PourIn, "validation"),
            (ReadingsIn, "validation"),
            (PourCreatedOut, "serialization"),
            (PourListOut, "serialization"),
            (ReadingsReportOut, "serialization"),
            (ReadingsOut, "serialization"),
            (PourForecastOut, "serialization"),
            (PourStatusOut, "serialization"),
            (JobOut, "serialization"),
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
        **PDF_CONTENT,
    }
    format_parameter = {
        "name": "format",
        "in": "query",
        "required": False,
        "description": "Response format, instead of the Accept header: pdf is a printable "
        "report (inputs, summary against the limits, charts, screening, assumptions, cautions)",
        "schema": {"type": "string", "enum": ["json", "csv", "svg", "png", "pdf"]},
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
            "near-surface temperature and core-to-surface differential. "
            + CAUTION
            + " "
            + STRICT_NOTE
            + " "
            + AUTH_NOTE,
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
                    "parameters": [UNITS_PARAMETER, format_parameter, SIZE_PARAMETER, PREFER],
                    "requestBody": {
                        "required": True,
                        "content": {
                            "application/json": {
                                "schema": {"$ref": "#/components/schemas/UncertainScenarioIn"}
                            }
                        },
                    },
                    "responses": {
                        **JOB_ACCEPTED,
                        "200": {"description": "The forecast", "content": forecast_content},
                        **_problems(400, 406, 413, 422, 503),
                    },
                },
                "get": {
                    "summary": "Forecast from flat query parameters (spreadsheet web query)",
                    "description": "Returns the series as CSV, or with `value` one summary "
                    "number as text/plain. CSV is the default: it is answered to no Accept, to "
                    "*/* and to browser-style Accept headers (text/html,...,*/*;q=0.8), as "
                    "spreadsheet web queries send; JSON or a chart only with `format=` or an "
                    "Accept that ranks that type strictly above text/csv. The CSV and chart "
                    "responses carry the headers Pourheat-Caution and Pourheat-Assumptions. "
                    + CAUTION,
                    "operationId": "queryForecast",
                    "parameters": [
                        *_query_parameters(),
                        value_parameter,
                        UNITS_PARAMETER,
                        SIZE_PARAMETER,
                        {
                            **format_parameter,
                            "description": "Response format (default csv), "
                            "instead of the Accept header; ignored with `value`",
                        },
                    ],
                    "responses": {
                        "200": {
                            "description": "CSV series (or JSON or a chart by `format`), or "
                            "one value",
                            "content": {
                                **forecast_content,
                                "text/plain": {"schema": {"type": "string"}, "example": "66.79"},
                            },
                        },
                        **_problems(406, 422, 503),
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
                    "parameters": [SI_ONLY_PARAMETER, PREFER],
                    "requestBody": {
                        "required": True,
                        "content": {
                            "application/json": {"schema": {"$ref": "#/components/schemas/PlanIn"}}
                        },
                    },
                    "responses": {
                        **JOB_ACCEPTED,
                        "200": {
                            "description": "One answer per control",
                            "content": {
                                "application/json": {
                                    "schema": {"$ref": "#/components/schemas/PlanOut"}
                                }
                            },
                        },
                        **_problems(400, 406, 413, 422, 503),
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
                        UNITS_PARAMETER,
                        {**format_parameter, "schema": {"type": "string", "enum": ["json", "csv"]}},
                        PREFER,
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
                        **JOB_ACCEPTED,
                        "200": {
                            "description": "One row per variant",
                            "content": {
                                "application/json": {
                                    "schema": {"$ref": "#/components/schemas/ComparisonOut"}
                                },
                                "text/csv": {"schema": {"type": "string"}},
                            },
                        },
                        **_problems(400, 406, 413, 422, 503),
                    },
                }
            },
            **_pour_paths(),
            **_board_paths(),
            **_job_paths(),
        },
        "components": {
            "schemas": definitions["$defs"],
            "securitySchemes": {"bearer": {"type": "http", "scheme": "bearer"}},
        },
    }


def main() -> None:
    """Write the document as YAML to stdout (needs PyYAML, part of the test extra)."""
    import yaml

    spec = json.loads(json.dumps(build_spec()))
    sys.stdout.write("# Generated by `python -m service.openapi`; do not edit by hand.\n")
    yaml.safe_dump(spec, sys.stdout, sort_keys=False, allow_unicode=True, width=100)


if __name__ == "__main__":
    main()
