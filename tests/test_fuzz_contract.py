"""Contract fuzzing: schemathesis generates requests from the app's own OpenAPI document
(GET /openapi.json) and checks every response: no 5xx, a documented status code, a documented
content type, and a body that matches the documented schema.

Every operation in the document is fuzzed, with valid (positive) and invalid (negative) data.
The app is built here (no conftest fixtures) with a temporary database and a small compute
budget (MAX_CELL_STEPS 2e6), so that random valid scenarios that would run for minutes are
refused quickly with a 422 instead. Examples are derandomized for repeatable runs; the expensive
operations (forecasts, plans, comparisons, pour forecast and status) get fewer examples.
scripts/fuzz_release.py runs the same checks with many more examples for release checks.

Operations on one stored pour (``/v1/pours/{pour_id}...``) draw ``pour_id`` from a live pour
(with readings), an archived pour and an unknown id (DELETE: a pour of its own instead of the
live one), since random ids would only ever reach
the 404 branch. ``GET /openapi.json`` is left out of the operations schemathesis generates
(the document loader skips the path it was loaded from); it has no inputs, so it is checked by
hand in :func:`test_openapi_document_is_served_as_documented`.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Any

import pytest
import schemathesis
from flask import Flask
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from schemathesis import GenerationMode
from schemathesis.checks import (
    content_type_conformance,
    not_a_server_error,
    response_schema_conformance,
    status_code_conformance,
)
from schemathesis.config import SchemathesisConfig

from service.app import create_app

CHECKS = [
    not_a_server_error,
    status_code_conformance,
    content_type_conformance,
    response_schema_conformance,
]
"""What every response must satisfy."""
FUZZ_CELL_STEPS = 2e6
"""Compute budget of the fuzzed app: random valid scenarios are refused fast (422)."""
EXPENSIVE = {
    "createForecast",
    "queryForecast",
    "createPlan",
    "createComparison",
    "forecastPour",
    "pourStatus",
    "boardIndex",
    "boardPour",
    "boardChart",
    "boardReport",
}
"""Operations that run whole forecasts."""
EXAMPLES = {"cheap": 40, "expensive": 12}
"""Positive examples per operation in this test file (negative: half)."""
FEWER = {
    "forecastPour": 6,
    "pourStatus": 6,
    "boardIndex": 3,
    "boardPour": 4,
    "boardReport": 3,
    "boardChart": 4,
}
"""Calibrations of the stored pour (about 1.5 s each) over a small input space."""
NOTHING_TO_NEGATE = {"healthz", "showPour", "archivePour", "pourStatus", "getJob", "deleteJob"} | {
    "boardIndex",
    "boardPour",
    "boardReport",
    "boardLoginForm",
    "boardLogout",
}
"""Operations without an input schemathesis can make invalid (no body, no query parameters;
``pour_id`` and ``job_id`` are any string, ``pour_id`` drawn from the stored ids): negative
generation is unsatisfiable for them, so they run with valid data only, the unknown pour id
included."""
UNKNOWN_POUR = "0123456789ab"

POUR_SCENARIO: dict[str, Any] = {
    "element": {"shape": "slab", "thickness_m": 0.4},
    "mix": {
        "cement_kg_m3": 350,
        "water_kg_m3": 160,
        "hydration": {
            "total_heat_j_kg": 460000,
            "tau_h": 13.0,
            "beta": 0.9,
            "alpha_u": 0.75,
            "activation_energy_j_mol": 41000,
        },
    },
    "placement": {"temperature_c": 20.0},
    "ambient": {"air_temperature_c": 15.0},
    "faces": {"top": {"insulation_r_m2k_w": 0.5}, "bottom": {"adiabatic": True}},
    "sensors": [{"id": "S1", "depth_m": 0.2}],
    "duration_h": 24,
    "output_interval_h": 3,
    "resolution": {"surface_cell_m": 0.04, "growth": 1.5, "max_cell_m": 0.2, "max_step_h": 3},
}
"""A small pour (forecast well under a second) for the per-pour operations."""
PLACED_AT = "2026-01-05T07:00:00Z"
READINGS = [
    {"time": f"2026-01-05T{7 + h:02d}:00:00Z", "sensor": "S1", "temperature_c": 20.0 + 0.8 * h}
    for h in range(0, 13, 3)
]


@dataclass(frozen=True)
class Fuzzed:
    """The app under test, its schema and the ids of the stored pours."""

    app: Flask
    schema: schemathesis.BaseSchema
    pour_ids: tuple[str, ...]
    disposable_id: str


def make_fuzzed(database: str) -> Fuzzed:
    """Build the app on ``database``, store a live pour with readings and an archived one, and
    load the schema from the app's own GET /openapi.json. schemathesis keeps its files (by
    default a ``.schemathesis/`` folder in the working directory) beside the database, in the
    caller's temporary folder."""
    app = create_app({"TESTING": True, "DATABASE": database, "MAX_CELL_STEPS": FUZZ_CELL_STEPS})
    client = app.test_client()
    ids = []
    for name in ("live", "archived", "disposable"):
        response = client.post(
            "/v1/pours", json={"name": name, "placed_at": PLACED_AT, "scenario": POUR_SCENARIO}
        )
        assert response.status_code == 201, response.get_json()
        ids.append(response.get_json()["id"])
    response = client.post(f"/v1/pours/{ids[0]}/readings", json={"readings": READINGS})
    assert response.status_code == 200, response.get_json()
    assert client.delete(f"/v1/pours/{ids[1]}").status_code == 204
    files = os.path.join(os.path.dirname(os.path.abspath(database)), "schemathesis")
    config = SchemathesisConfig.from_dict({"cache": {"directory": files}})
    schema = schemathesis.openapi.from_wsgi("/openapi.json", app, config=config)
    return Fuzzed(app, schema, (ids[0], ids[1], UNKNOWN_POUR), ids[2])


def operations(schema: schemathesis.BaseSchema) -> Iterator[schemathesis.APIOperation]:
    """Every operation of the schema; an operation schemathesis cannot load is an error."""
    for result in schema.get_all_operations():
        yield result.ok()


def operation_id(operation: schemathesis.APIOperation) -> str:
    return operation.definition.raw["operationId"]


def case_strategy(
    fuzzed: Fuzzed, operation: schemathesis.APIOperation, mode: GenerationMode
) -> st.SearchStrategy:
    """Cases for one operation; pour-scoped operations get real pour ids (DELETE archives a
    pour of its own, so that the live pour stays live for the other operations)."""
    if "{pour_id}" not in operation.path:
        return operation.as_strategy(generation_mode=mode)
    pour_ids = fuzzed.pour_ids
    if operation.method.upper() == "DELETE":
        pour_ids = (fuzzed.disposable_id, *pour_ids[1:])
    return st.one_of(
        [
            operation.as_strategy(generation_mode=mode, path_parameters={"pour_id": pour_id})
            for pour_id in pour_ids
        ]
    )


def operation_runner(
    fuzzed: Fuzzed,
    operation: schemathesis.APIOperation,
    mode: GenerationMode,
    max_examples: int,
    on_case: Callable[[Any, Any], None] | None = None,
    derandomize: bool = True,
) -> Callable[[], None]:
    """A hypothesis test running ``max_examples`` generated cases of one operation through the
    checks; calling it raises the first failure (shrunk) with a reproduction."""

    @settings(
        max_examples=max_examples,
        deadline=None,
        derandomize=derandomize,
        database=None,
        suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much],
        print_blob=False,
    )
    @given(case=case_strategy(fuzzed, operation, mode))
    def run(case: Any) -> None:
        response = case.call_and_validate(checks=CHECKS)
        if on_case is not None:
            on_case(case, response)

    return run


def fuzz_operation(
    fuzzed: Fuzzed, operation: schemathesis.APIOperation, mode: GenerationMode, max_examples: int
) -> None:
    """Fuzz one operation (see :func:`operation_runner`)."""
    operation_runner(fuzzed, operation, mode, max_examples)()


def examples_for(operation_id_: str, mode: GenerationMode, table: dict[str, int]) -> int:
    n = table["expensive" if operation_id_ in EXPENSIVE else "cheap"]
    if table is EXAMPLES:
        n = FEWER.get(operation_id_, n)
    return n if mode is GenerationMode.POSITIVE else max(1, n // 2)


@pytest.fixture(scope="module")
def fuzzed(tmp_path_factory) -> Fuzzed:
    return make_fuzzed(os.fspath(tmp_path_factory.mktemp("fuzz") / "pours.sqlite3"))


def _operation_ids() -> list[str]:
    """Operation ids of the committed document (collected before any app exists)."""
    from service.openapi import build_spec

    return [
        op["operationId"]
        for path, item in build_spec()["paths"].items()
        if path != "/openapi.json"
        for method, op in item.items()
        if method in ("get", "post", "put", "patch", "delete")
    ]


def _cases() -> list[tuple[str, GenerationMode]]:
    return [
        (op_id, mode)
        for op_id in _operation_ids()
        for mode in (GenerationMode.POSITIVE, GenerationMode.NEGATIVE)
        if mode is GenerationMode.POSITIVE or op_id not in NOTHING_TO_NEGATE
    ]


@pytest.mark.parametrize(("op_id", "mode"), _cases(), ids=lambda v: str(v))
def test_operation_honours_the_contract(fuzzed, op_id, mode):
    by_id = {operation_id(op): op for op in operations(fuzzed.schema)}
    assert op_id in by_id, f"schemathesis did not load {op_id}"
    fuzz_operation(fuzzed, by_id[op_id], mode, examples_for(op_id, mode, EXAMPLES))


def test_every_operation_is_fuzzed(fuzzed):
    # nothing skipped silently: the generated operations are the documented ones
    loaded = sorted(operation_id(op) for op in operations(fuzzed.schema))
    assert loaded == sorted(_operation_ids())


def test_schemathesis_files_go_to_the_temporary_folder(fuzzed, tmp_path_factory):
    # not an untracked .schemathesis/ folder in the checkout
    folder = fuzzed.schema.config.cache.directory
    assert folder is not None
    assert folder.is_relative_to(tmp_path_factory.getbasetemp())


def test_openapi_document_is_served_as_documented(fuzzed):
    # GET /openapi.json is not generated by schemathesis (see the module docstring)
    response = fuzzed.app.test_client().get("/openapi.json")
    assert response.status_code == 200
    assert response.mimetype == "application/json"
    document = response.get_json()
    assert document["openapi"].startswith("3.1")
    assert "/openapi.json" in document["paths"]


@pytest.mark.parametrize("interval", ["1e-300", "0.001"])
def test_tiny_output_interval_is_a_422_not_a_500(fuzzed, interval):
    # found by this fuzzing: output_interval_h=1e-300 overflowed the solver's output count
    # (OverflowError, a 500); now at least 0.01 h, and the budget counts the output times
    query = (
        "shape=slab&thickness_m=1&cement_kg_m3=350&water_kg_m3=160&placement_c=20"
        f"&air_mean_c=15&output_interval_h={interval}"
    )
    response = fuzzed.app.test_client().get(f"/v1/forecasts?{query}")
    assert response.status_code == 422
    assert response.get_json()["errors"][0]["field"] == "output_interval_h"
