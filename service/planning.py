"""Planning and comparison requests: solve for controls, and compare variants of a scenario."""

import copy
import io
from dataclasses import asdict
from functools import partial
from typing import Any

from pydantic import ValidationError

from model.planning import SEARCHES, Limits, solve_control
from model.precooling import (
    Batch,
    fresh_concrete_temperature_c,
    ice_for_target_kg_m3,
    water_temperature_for_target_c,
)
from model.scenario import Scenario
from model.solver import forecast
from service import rounding
from service.convert import CAUTIONS
from service.csvout import SafeCsvWriter
from service.errors import InvalidScenarioError, validation_errors
from service.forecasting import (
    check_budget,
    parallel_rounds,
    run_forecast,
    validated_scenario,
)
from service.parallel import Progress, run_many, tick
from service.progress import on_step
from service.schemas import BatchIn, ComparisonIn, PlanIn

PLAN_EVALUATIONS = 14
"""Forecasts a single control search may take one after the other, for the compute budget."""
MIN_CHILLED_WATER_C = 1.0
"""Coldest practical chilled batch water [C] (common practice, no source)."""


def _summary_json(summary: Any) -> dict[str, float]:
    """A forecast summary as reported: temperatures 0.01 C, times 0.01 h."""
    return {
        k: rounding.hours(v) if k.endswith("_h") else rounding.temperature(v)
        for k, v in asdict(summary).items()
    }


def _counted_forecast(scenario: Scenario, deadline: float | None) -> Any:
    """One forecast of a search, reported to the executor's progress."""
    result = forecast(scenario, deadline, on_step)
    tick()
    return result


def _solve_one(
    control: str, scenario: Scenario, limits: Limits, deadline: float | None
) -> dict[str, Any]:
    try:
        result = solve_control(
            scenario, control, limits, partial(_counted_forecast, deadline=deadline)
        )
    except ValueError as error:
        return {"status": "not_applicable", "value": None, "note": str(error)}
    value = result.value
    if value is not None:
        value = rounding.toward_safe(value, result.tolerance, SEARCHES[control].larger_is_safer)
    return {
        "value": value,
        "status": result.status,
        "tolerance": result.tolerance,
        "range": [result.low, result.high],
        "temperature_margin_c": rounding.temperature(result.temperature_margin_c),
        "differential_margin_c": rounding.temperature(result.differential_margin_c),
        "summary": _summary_json(result.summary),
        "forecasts_run": result.forecasts_run,
        "coarse_forecasts_run": result.coarse_forecasts_run,
        "note": result.note,
        "unsettled": result.unsettled,
    }


def precooling_json(batch_in: BatchIn, target_c: float | None) -> dict[str, Any]:
    """Fresh concrete temperature of the batch, and the ice or chilled water for the target."""
    batch = Batch(**batch_in.model_dump())
    out: dict[str, Any] = {
        "method": "heat balance of ACI 305R / ACI 207.4R (SI form)",
        "fresh_concrete_c": round(fresh_concrete_temperature_c(batch), 2),
        "target_c": target_c,
    }
    if target_c is None:
        out["note"] = "no max_placement_temperature_c was found, so there is no target"
        return out
    ice = ice_for_target_kg_m3(batch, target_c)
    out["ice_kg_m3"] = round(ice, 1) if ice <= batch.water_kg_m3 else None
    water = water_temperature_for_target_c(batch, target_c)
    out["chilled_water_c"] = round(water, 1) if water >= MIN_CHILLED_WATER_C else None
    if ice > batch.water_kg_m3:
        out["note"] = (
            "replacing all the mixing water by ice is not enough; cool the aggregate "
            "(or use liquid nitrogen) as well"
        )
    elif water < MIN_CHILLED_WATER_C:
        out["note"] = "chilled water alone cannot reach the target; use ice"
    return out


def run_plan(
    payload: Any,
    max_cell_steps: float,
    deadline: float | None = None,
    progress: Progress | None = None,
) -> dict[str, Any]:
    """Solve each requested control; the body of POST /v1/plans. ``progress(done, total)``
    counts forecasts (the total an estimate)."""
    plan = PlanIn.model_validate(payload)
    try:
        _, scenario, _ = validated_scenario(plan.scenario.model_dump())
    except ValidationError as error:  # pragma: no cover - validated already as part of PlanIn
        raise InvalidScenarioError(validation_errors(error)) from error
    except InvalidScenarioError as error:
        raise InvalidScenarioError(
            [{**e, "field": f"scenario.{e['field']}"} for e in error.errors]
        ) from error
    controls = list(dict.fromkeys(plan.solve_for))
    rounds = PLAN_EVALUATIONS * parallel_rounds(len(controls))
    check_budget(scenario, max_cell_steps, rounds, "solve_for", deadline)
    chosen = plan.limits or plan.scenario.limits
    limits = Limits(chosen.max_temperature_c, chosen.max_differential_c)
    results = run_many(
        partial(_solve_one, scenario=scenario, limits=limits),
        controls,
        deadline,
        progress,
        ticks_expected=PLAN_EVALUATIONS * len(controls),
    )
    body: dict[str, Any] = {
        "limits": {
            "max_temperature_c": limits.max_temperature_c,
            "max_differential_c": limits.max_differential_c,
        },
        "controls": dict(zip(controls, results, strict=True)),
        "cautions": list(CAUTIONS),
    }
    if plan.precooling is not None:
        found = body["controls"].get("max_placement_temperature_c", {})
        body["precooling"] = precooling_json(plan.precooling, found.get("value"))
    return body


def merged(base: Any, override: Any) -> Any:
    """``base`` with ``override`` merged in recursively (dicts merge, anything else replaces)."""
    if isinstance(base, dict) and isinstance(override, dict):
        out = copy.deepcopy(base)
        for key, value in override.items():
            out[key] = merged(base.get(key), value)
        return out
    return copy.deepcopy(override)


def _forecast_row(
    payload: dict[str, Any], max_cell_steps: float, deadline: float | None
) -> dict[str, Any]:
    _, body = run_forecast(payload, max_cell_steps, deadline)
    summary = dict(body["summary"])
    limits = summary.pop("limits")
    return {
        **summary,
        **{f"{k}_met": v["met"] for k, v in limits.items()},
        **{f"{k}_verdict": v["verdict"] for k, v in limits.items()},
    }


COMPARISON_COLUMNS = (
    "variant",
    "peak_temperature_c",
    "peak_time_h",
    "max_differential_c",
    "max_differential_time_h",
    "max_spread_c",
    "min_surface_temperature_c",
    "max_temperature_c_met",
    "max_differential_c_met",
    "max_temperature_c_verdict",
    "max_differential_c_verdict",
)


def run_comparison(
    payload: Any,
    max_cell_steps: float,
    deadline: float | None = None,
    progress: Progress | None = None,
) -> dict[str, Any]:
    """One summary row per variant (the base first); the body of POST /v1/comparisons."""
    request = ComparisonIn.model_validate(payload)
    scenarios = {"base": request.base}
    for name, override in request.variants.items():
        scenarios[name] = merged(request.base, override)
    errors = []
    for name, scenario_payload in scenarios.items():
        prefix = "base" if name == "base" else f"variants.{name}"
        try:
            _, scenario, _ = validated_scenario(scenario_payload)
            check_budget(
                scenario, max_cell_steps, parallel_rounds(len(scenarios)), deadline=deadline
            )
        except ValidationError as error:
            errors += [{**e, "field": f"{prefix}.{e['field']}"} for e in validation_errors(error)]
        except InvalidScenarioError as error:
            errors += [{**e, "field": f"{prefix}.{e['field']}"} for e in error.errors]
    if errors:
        raise InvalidScenarioError(errors)
    rows = run_many(
        partial(_forecast_row, max_cell_steps=max_cell_steps),
        list(scenarios.values()),
        deadline,
        progress,
    )
    return {
        "rows": [{"variant": name, **row} for name, row in zip(scenarios, rows, strict=True)],
        "cautions": list(CAUTIONS),
    }


def comparison_csv(body: dict[str, Any]) -> str:
    """The comparison rows as CSV: booleans as JSON writes them (true/false), variant names made
    spreadsheet-safe."""
    out = io.StringIO()
    writer = SafeCsvWriter(out)
    writer.writerow(COMPARISON_COLUMNS)
    writer.writerows(
        [rounding.csv_cell(row.get(c, "")) for c in COMPARISON_COLUMNS] for row in body["rows"]
    )
    return out.getvalue()
