"""Run forecast requests end to end: validate, check, convert, guard the compute budget, solve.

Shared by the HTTP blueprints and the command line so both answer the same way.
"""

import math
from dataclasses import asdict
from functools import partial
from typing import Any

import numpy as np

from model.grid import cell_count
from model.results import Summary
from model.scenario import Scenario
from model.solver import ConvergenceError, ThermalSolver, forecast, forecast_batch
from model.uncertainty import Spreads, percentiles, sample_scenarios, sample_variations
from service import progress
from service.checks import cross_field_errors
from service.convert import forecast_json, scenario_from
from service.errors import InvalidScenarioError
from service.parallel import map_in_processes
from service.schemas import ScenarioIn, UncertainScenarioIn

DEFAULT_MAX_CELL_STEPS = 40_000_000
"""Largest grid cells x time steps one forecast may cost (about 15 s on one core); a setting
(POURHEAT_MAX_CELL_STEPS)."""
BATCH_BUDGET_FACTOR = 8
"""Requests that run many forecasts (plans, comparisons, uncertainty bands) may cost this many
times the single-forecast budget in all."""
HYDRATION_STEPS = 250
"""Typical number of extra steps the solver takes to resolve the hydration peak."""


def estimated_steps(scenario: Scenario) -> int:
    """Rough number of time steps a forecast will take (for the compute budget): about one an
    hour under daily air cycles (fewer in steady air), plus those of the hydration peak."""
    step_h = min(scenario.settings.max_step_h, 1.0)
    return math.ceil(scenario.duration_h / step_h) + HYDRATION_STEPS


def check_budget(
    scenario: Scenario, max_cell_steps: float, runs: int = 1, field: str = "resolution"
) -> None:
    """Refuse work whose grid x steps x runs would exceed the budget, saying how to coarsen."""
    cells = cell_count(scenario)
    cost = cells * estimated_steps(scenario) * runs
    budget = max_cell_steps * (1 if runs == 1 else BATCH_BUDGET_FACTOR)
    if cost > budget:
        res = scenario.settings
        runs_text = f" x {runs} forecasts" if runs > 1 else ""
        advice = (
            f"coarsen it, e.g. resolution.max_cell_m {2 * res.max_cell_m:g}, surface_cell_m "
            f"{2 * res.surface_cell_m:g}, growth {min(1.5, res.growth + 0.1):g}, or shorten "
            "duration_h, or model a slab or section instead of a block"
        )
        if runs > 1:
            advice += ", or ask for fewer runs"
        message = (
            f"the grid would have {cells} cells and about {estimated_steps(scenario)} steps"
            f"{runs_text} ({cost:.3g} cell-steps), more than the budget of {budget:.3g}; {advice}"
        )
        raise InvalidScenarioError([{"field": field, "message": message}])


def validated_scenario(
    payload: Any, schema: type[ScenarioIn] = ScenarioIn
) -> tuple[ScenarioIn, Scenario, str]:
    """Validate a scenario payload: (request model, model scenario, hydration origin).

    Raises pydantic.ValidationError for an invalid field, InvalidScenarioError for conflicts.
    """
    scenario_in = schema.model_validate(payload)
    problems = cross_field_errors(scenario_in)
    if problems:
        raise InvalidScenarioError(problems)
    scenario, origin = scenario_from(scenario_in)
    return scenario_in, scenario, origin


def solve(scenario: Scenario, deadline: float | None = None):
    """Run one forecast; a solver failure becomes a 422 naming the scenario. Past ``deadline``
    (a ``time.monotonic()`` value) the solver raises DeadlineExceededError (a 503)."""
    try:
        return ThermalSolver(scenario).run(deadline, progress.on_step)
    except ConvergenceError as error:
        raise InvalidScenarioError(
            [{"field": "(scenario)", "message": f"{error}; try a smaller resolution.max_step_h"}]
        ) from error


def _summary_of(scenario: Scenario, deadline: float | None) -> Summary:
    return forecast(scenario, deadline, progress.on_step).summary


def uncertainty_band(
    scenario: Scenario, spreads: Spreads, samples: int, seed: int, deadline: float | None = None
) -> dict:
    """P10/P50/P90 of peak and maximum differential over a Latin hypercube of forecasts.

    Slabs step all samples together as one batch; sections and blocks run one forecast per
    sample in parallel processes.
    """
    if scenario.element.shape == "slab":
        variations = sample_variations(spreads, samples, seed)
        batch = forecast_batch(scenario, variations, deadline, progress.on_step)
        peaks, diffs = batch.peak_temperature_c, batch.max_differential_c
    else:
        summaries = map_in_processes(
            partial(_summary_of, deadline=deadline),
            sample_scenarios(scenario, spreads, samples, seed),
        )
        peaks = np.array([s.peak_temperature_c for s in summaries])
        diffs = np.array([s.max_differential_c for s in summaries])
    return {
        "samples": samples,
        "seed": seed,
        "method": "Latin hypercube of whole forecasts",
        "spreads": asdict(spreads),
        "peak_temperature_c": {k: round(v, 3) for k, v in percentiles(peaks).items()},
        "max_differential_c": {k: round(v, 3) for k, v in percentiles(diffs).items()},
    }


def run_forecast(
    payload: Any, max_cell_steps: float = DEFAULT_MAX_CELL_STEPS, deadline: float | None = None
) -> tuple[ScenarioIn, dict[str, Any]]:
    """Validate a scenario payload and forecast it; returns the request and the response body.

    With ``uncertainty`` in the payload the body's summary also has an ``uncertainty`` band.

    Raises
    ------
    pydantic.ValidationError
        A field is invalid.
    InvalidScenarioError
        Fields conflict, the compute budget is exceeded, or the solver failed to converge.
    """
    scenario_in, scenario, origin = validated_scenario(payload, UncertainScenarioIn)
    band = scenario_in.uncertainty  # type: ignore[attr-defined]
    check_budget(scenario, max_cell_steps)
    if band is not None:
        check_budget(scenario, max_cell_steps, band.samples, "uncertainty.samples")
    body = forecast_json(scenario_in, scenario, solve(scenario, deadline), origin)
    if band is not None:
        spreads = Spreads(
            band.placement_sd_c, band.air_sd_c, band.total_heat_rel_sd, band.tau_rel_sd
        )
        body["summary"]["uncertainty"] = uncertainty_band(
            scenario, spreads, band.samples, band.seed, deadline
        )
    return scenario_in, body
