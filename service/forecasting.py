"""Run a forecast request end to end: validate, check, convert, guard the compute budget, solve.

Shared by the HTTP blueprints and the command line so both answer the same way.
"""

import math
from typing import Any

from model.grid import cell_count
from model.scenario import Scenario
from model.solver import ConvergenceError, ThermalSolver
from service.checks import cross_field_errors
from service.convert import forecast_json, scenario_from
from service.errors import InvalidScenarioError
from service.schemas import ScenarioIn

DEFAULT_MAX_CELL_STEPS = 40_000_000
"""Largest grid cells x time steps one request may cost (about 15 s on one core); a setting
(POURHEAT_MAX_CELL_STEPS)."""
HYDRATION_STEPS = 250
"""Typical number of extra steps the solver takes to resolve the hydration peak."""


def estimated_steps(scenario: Scenario) -> int:
    """Rough number of time steps a forecast will take (for the compute budget)."""
    return math.ceil(scenario.duration_h / scenario.settings.max_step_h) + HYDRATION_STEPS


def check_budget(scenario: Scenario, max_cell_steps: float) -> None:
    """Refuse a scenario whose grid x steps would exceed the budget, saying how to coarsen."""
    cells = cell_count(scenario)
    cost = cells * estimated_steps(scenario)
    if cost > max_cell_steps:
        res = scenario.settings
        raise InvalidScenarioError(
            [
                {
                    "field": "resolution",
                    "message": (
                        f"the grid would have {cells} cells and about "
                        f"{estimated_steps(scenario)} steps ({cost:.3g} cell-steps), more than "
                        f"the budget of {max_cell_steps:.3g}; coarsen it, e.g. resolution."
                        f"max_cell_m {2 * res.max_cell_m:g}, surface_cell_m "
                        f"{2 * res.surface_cell_m:g}, growth {min(1.5, res.growth + 0.1):g}, "
                        "or shorten duration_h, or model a slab or section instead of a block"
                    ),
                }
            ]
        )


def run_forecast(
    payload: Any, max_cell_steps: float = DEFAULT_MAX_CELL_STEPS
) -> tuple[ScenarioIn, dict[str, Any]]:
    """Validate a scenario payload and forecast it; returns the request and the response body.

    Raises
    ------
    pydantic.ValidationError
        A field is invalid.
    InvalidScenarioError
        Fields conflict, the compute budget is exceeded, or the solver failed to converge.
    """
    scenario_in = ScenarioIn.model_validate(payload)
    problems = cross_field_errors(scenario_in)
    if problems:
        raise InvalidScenarioError(problems)
    scenario, origin = scenario_from(scenario_in)
    check_budget(scenario, max_cell_steps)
    try:
        result = ThermalSolver(scenario).run()
    except ConvergenceError as error:
        raise InvalidScenarioError(
            [{"field": "(scenario)", "message": f"{error}; try a finer resolution.max_step_h"}]
        ) from error
    return scenario_in, forecast_json(scenario_in, scenario, result, origin)
