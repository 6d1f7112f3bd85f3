"""Run forecast requests end to end: validate, check, convert, guard the compute budget, solve.

Shared by the HTTP blueprints and the command line so both answer the same way.
"""

import math
import os
import time
from collections.abc import Callable
from dataclasses import asdict
from typing import Any

import numpy as np

from model.grid import cell_count
from model.results import Summary
from model.scenario import Scenario
from model.solver import (
    ConvergenceError,
    DeadlineExceededError,
    ThermalSolver,
    forecast,
    forecast_batch,
)
from model.uncertainty import (
    Spreads,
    band_sampling,
    offset_corrected,
    percentiles,
    sample_scenarios,
    sample_variations,
)
from service import progress as job_progress
from service.checks import cross_field_errors
from service.convert import forecast_json, scenario_from
from service.errors import InvalidScenarioError
from service.limits import DEFAULT_FORECAST_TIMEOUT_S
from service.parallel import Progress, run_many
from service.rounding import temperature
from service.schemas import ScenarioIn, UncertainScenarioIn

SECONDS_PER_CELL_STEP = 1.5e-6
"""CPU time of one grid cell for one time step [s], on 2D and 3D grids (conjugate gradients or
sparse LU). Set by scripts/measure_budget.py on this project's 2-core machine with one BLAS
thread, 2026-12-02, while other jobs kept it busy: the 3D pier example took 1.28-1.48 us per
cell-step taken over four runs of 240 h and 336 h, and 1.64 us in one run to 650 h at the
busiest time. Small 2D grids are covered with STEP_OVERHEAD_S (the wall example, 901 cells:
0.62 s CPU against 0.84 s estimated). Re-measure when the solver changes. Re-measured on an
idle machine on 2026-12-03, after cheaper 3D steps: the pier 0.69 us per cell-step taken (11.7 s
against 38.2 s estimated); kept, because the 2D rows keep only 15-25 % of headroom at a lower
figure and a refusal at once beats a 503 after a long wait (README, "Compute budget")."""
STEP_OVERHEAD_S = 5.0e-4
"""CPU time of one time step besides its cells [s]: the Python work of a step, which dominates
1D (the 1D mat example: 0.48 ms per step taken over 2000 h, rounded up; same run)."""
SLAB_STEPS_PER_HOUR = 3.0
"""Steps per hour of forecast a slab takes besides the hydration peak (the 1D mat example under
daily air cycles and sun: 2.6 per hour over 2000 h, rounded up; same run)."""
GRID_STEPS_PER_HOUR = 1.2
"""Steps per hour of forecast a section or block takes besides the hydration peak (the 3D pier
example run to 650 h: 1026 steps, 1.19 per hour after the peak's 250; same run)."""
BUDGET_SHARE = 0.6
"""Share of the remaining wall-clock cap (POURHEAT_FORECAST_TIMEOUT_S) that a request's
estimated time may take: the rest is headroom for a machine shared by other workers and for
the estimate's own error."""
DEFAULT_MAX_CELL_STEPS = float(
    f"{DEFAULT_FORECAST_TIMEOUT_S * BUDGET_SHARE / SECONDS_PER_CELL_STEP:.2g}"
)
"""Largest grid cells x estimated time steps one forecast may cost by default, a setting
(POURHEAT_MAX_CELL_STEPS): DEFAULT_FORECAST_TIMEOUT_S x BUDGET_SHARE / SECONDS_PER_CELL_STEP
to two digits, so that a 2D or 3D forecast at this cost takes about 24 s of one core here."""
COMMAND_LINE_MAX_CELL_STEPS = 2.0e8
"""Default budget of ``pourheat forecast`` and ``pourheat plan`` [cell-steps], where no request
cap applies: about five minutes of one core here at SECONDS_PER_CELL_STEP (POURHEAT_MAX_CELL_STEPS
overrides it, as for the service)."""
HYDRATION_STEPS = 250
"""Typical number of extra steps the solver takes to resolve the hydration peak."""
MAX_OUTPUT_VALUES = 2_000_000
"""Most numbers one forecast may report (reported times x series, as counted by
:func:`output_values`), fixed here. Bounds the response and the memory a request holds: a 1D
forecast just inside it (20 sensors, 210 h every 0.01 h) answered 7.9 MB of JSON and raised
the process's peak resident size by 67 MB."""
BASE_SERIES = 20
"""Series every forecast reports besides faces and sensors (time, core, surface, ... and the
screening series), an upper bound for the output budget."""
SERIES_PER_FACE = 2
"""Series reported per face: temperature and equivalent age."""
SERIES_PER_SENSOR = 3
"""Series reported per sensor: temperature, equivalent age and (with screening) strength."""


def estimated_steps(scenario: Scenario) -> int:
    """Number of time steps a forecast will take, for the compute budget: those of the
    hydration peak, plus GRID_STEPS_PER_HOUR on 2D and 3D grids or SLAB_STEPS_PER_HOUR on slabs
    (a daily air cycle and sun keep their steps short), and at least one per ``max_step_h``."""
    per_hour = SLAB_STEPS_PER_HOUR if scenario.element.shape == "slab" else GRID_STEPS_PER_HOUR
    per_hour = max(per_hour, 1.0 / scenario.settings.max_step_h)
    return math.ceil(scenario.duration_h * per_hour) + HYDRATION_STEPS


def estimated_seconds(scenario: Scenario) -> float:
    """Estimated wall time of one forecast on this project's machine [s]: estimated steps x
    (STEP_OVERHEAD_S + cells x SECONDS_PER_CELL_STEP)."""
    return estimated_steps(scenario) * (
        STEP_OVERHEAD_S + cell_count(scenario) * SECONDS_PER_CELL_STEP
    )


def output_values(scenario: Scenario) -> tuple[int, int]:
    """(reported times, series) of a forecast: an upper bound on what it reports."""
    times = math.floor(scenario.duration_h / scenario.output_interval_h + 1e-9) + 2
    series = BASE_SERIES + SERIES_PER_FACE * 6 + SERIES_PER_SENSOR * len(scenario.sensors)
    return times, series


def parallel_rounds(runs: int) -> int:
    """Forecasts in a row on the busiest core when ``runs`` run across the CPU cores."""
    return math.ceil(runs / (os.cpu_count() or 1))


def _refuse(field: str, message: str) -> None:
    raise InvalidScenarioError([{"field": field, "message": message}])


def check_output(scenario: Scenario) -> None:
    """Refuse a forecast whose reported series would exceed MAX_OUTPUT_VALUES, saying how to
    reduce them (422 naming output_interval_h)."""
    times, series = output_values(scenario)
    if times * series <= MAX_OUTPUT_VALUES:
        return
    interval = scenario.duration_h * series / MAX_OUTPUT_VALUES
    _refuse(
        "output_interval_h",
        f"the forecast would report about {times * series:.3g} values ({times} times x "
        f"{series} series), more than {MAX_OUTPUT_VALUES:.3g}; raise output_interval_h to at "
        f"least {math.ceil(interval * 100) / 100:g} h, shorten duration_h, or ask for fewer "
        "sensors",
    )


def check_budget(
    scenario: Scenario,
    max_cell_steps: float,
    runs: int = 1,
    field: str = "resolution",
    deadline: float | None = None,
) -> None:
    """Refuse work that would exceed the budget, saying how to reduce it (422).

    ``runs`` is the number of forecasts run one after the other (on the busiest core);
    grid cells x estimated steps x runs must stay within ``max_cell_steps``, and, when a
    ``deadline`` (a ``time.monotonic()`` value) is given, the estimated time
    (:func:`estimated_seconds` x runs) within BUDGET_SHARE of the time left. The reported
    series must stay within MAX_OUTPUT_VALUES (:func:`check_output`).
    """
    check_output(scenario)
    cells, steps = cell_count(scenario), estimated_steps(scenario)
    cost = cells * steps * runs
    seconds = estimated_seconds(scenario) * runs
    allowed_s = None if deadline is None else BUDGET_SHARE * (deadline - time.monotonic())
    if allowed_s is not None and allowed_s <= 0:
        raise DeadlineExceededError("the wall-clock cap was reached before the forecast started")
    if cost <= max_cell_steps and (allowed_s is None or seconds <= allowed_s):
        return
    res = scenario.settings
    runs_text = f" x {runs} forecasts in a row" if runs > 1 else ""
    advice = (
        f"coarsen it, e.g. resolution.max_cell_m {2 * res.max_cell_m:g}, surface_cell_m "
        f"{2 * res.surface_cell_m:g}, growth {min(1.5, res.growth + 0.1):g}, or shorten "
        "duration_h, or model a slab or section instead of a block"
    )
    if runs > 1:
        advice += ", or ask for fewer runs"
    if allowed_s is not None:
        advice += (
            ", or send it as a job (header Prefer: respond-async), which has its own budget and "
            "cap (POURHEAT_JOB_MAX_CELL_STEPS, POURHEAT_JOB_TIMEOUT_S)"
        )
    limit = f"the budget of {max_cell_steps:.3g} cell-steps"
    if allowed_s is not None:
        limit += (
            f" and {allowed_s:.1f} s of estimated time left before the wall-clock cap "
            "(POURHEAT_FORECAST_TIMEOUT_S; for jobs POURHEAT_JOB_TIMEOUT_S)"
        )
    _refuse(
        field,
        f"the grid would have {cells} cells and about {steps} steps{runs_text} ({cost:.3g} "
        f"cell-steps, about {seconds:.0f} s here), more than {limit}; {advice}",
    )


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


def _step_hook(progress: Progress | None) -> Callable[[float, float], None]:
    """The solver's step hook: the job's progress (service/progress.py), and ``progress`` too
    when a caller follows the march (the command line's display)."""
    if progress is None:
        return job_progress.on_step

    def both(time_h: float, horizon_h: float) -> None:
        job_progress.on_step(time_h, horizon_h)
        progress(time_h, horizon_h)

    return both


def solve(scenario: Scenario, deadline: float | None = None, progress: Progress | None = None):
    """Run one forecast; a solver failure becomes a 422 naming the scenario. Past ``deadline``
    (a ``time.monotonic()`` value) the solver raises DeadlineExceededError (a 503);
    ``progress(simulated_h, horizon_h)`` follows the march."""
    try:
        return ThermalSolver(scenario).run(deadline, _step_hook(progress))
    except ConvergenceError as error:
        raise InvalidScenarioError(
            [{"field": "(scenario)", "message": f"{error}; try a smaller resolution.max_step_h"}]
        ) from error


def _summary_of(scenario: Scenario, deadline: float | None) -> Summary:
    return forecast(scenario, deadline, job_progress.on_step).summary


def uncertainty_band(
    scenario: Scenario,
    spreads: Spreads,
    samples: int,
    seed: int,
    deadline: float | None = None,
    nominal: Summary | None = None,
) -> dict:
    """P10/P50/P90 of peak and maximum differential over a Latin hypercube of forecasts.

    Slabs step all samples together as one batch. Sections and blocks run one forecast per
    sample, on the coarse grid (``Scenario.coarsened``: a quarter of the cost in 2D, a tenth
    in 3D), on the executor of service/parallel.py (local processes or a Dask cluster), and
    shift them by the grid offset at the nominal inputs (``nominal``, the scenario's own
    forecast summary, run here if not given; see model.uncertainty.offset_corrected).
    """
    if scenario.element.shape == "slab":
        variations = sample_variations(spreads, samples, seed)
        batch = forecast_batch(scenario, variations, deadline, job_progress.on_step)
        peaks, diffs = batch.peak_temperature_c, batch.max_differential_c
        method = "Latin hypercube of whole forecasts"
    else:
        coarse = scenario.coarsened()
        base, *summaries = run_many(
            _summary_of, [coarse, *sample_scenarios(coarse, spreads, samples, seed)], deadline
        )
        if nominal is None:
            nominal = _summary_of(scenario, deadline)
        peaks, diffs = (
            offset_corrected(
                np.array([getattr(s, q) for s in summaries]), getattr(base, q), getattr(nominal, q)
            )
            for q in ("peak_temperature_c", "max_differential_c")
        )
        method = (
            "Latin hypercube of whole forecasts on a grid twice as coarse, shifted by the grid "
            "offset at the nominal inputs"
        )
    return {
        **band_sampling(samples),
        "seed": seed,
        "method": f"{method}; percentiles at rank p n + 1/2 (Hazen)",
        "spreads": asdict(spreads),
        "peak_temperature_c": {k: temperature(v) for k, v in percentiles(peaks).items()},
        "max_differential_c": {k: temperature(v) for k, v in percentiles(diffs).items()},
    }


def band_rounds(scenario: Scenario, samples: int) -> int:
    """Whole forecasts of ``scenario`` in a row that a forecast with a band of ``samples``
    costs, for the compute budget: the forecast, then the samples across the CPU cores
    (sections and blocks: the samples and one nominal run on the coarse grid, counted at the
    ratio of their estimated times)."""
    if scenario.element.shape == "slab":
        return 1 + parallel_rounds(samples)
    share = estimated_seconds(scenario.coarsened()) / estimated_seconds(scenario)
    return 1 + math.ceil(parallel_rounds(samples + 1) * share)


def run_forecast(
    payload: Any,
    max_cell_steps: float = DEFAULT_MAX_CELL_STEPS,
    deadline: float | None = None,
    progress: Progress | None = None,
) -> tuple[ScenarioIn, dict[str, Any]]:
    """Validate a scenario payload and forecast it; returns the request and the response body.

    With ``uncertainty`` in the payload the body's summary also has an ``uncertainty`` band.
    ``progress(simulated_h, horizon_h)`` follows the forecast (not the band).

    Raises
    ------
    pydantic.ValidationError
        A field is invalid.
    InvalidScenarioError
        Fields conflict, the compute budget is exceeded, or the solver failed to converge.
    """
    scenario_in, scenario, origin = validated_scenario(payload, UncertainScenarioIn)
    band = scenario_in.uncertainty  # type: ignore[attr-defined]
    check_budget(scenario, max_cell_steps, deadline=deadline)
    if band is not None:
        rounds = band_rounds(scenario, band.samples)
        check_budget(scenario, max_cell_steps, rounds, "uncertainty.samples", deadline)
    result = solve(scenario, deadline, progress)
    body = forecast_json(scenario_in, scenario, result, origin)
    if band is not None:
        spreads = Spreads(
            band.placement_sd_c, band.air_sd_c, band.total_heat_rel_sd, band.tau_rel_sd
        )
        body["summary"]["uncertainty"] = uncertainty = uncertainty_band(
            scenario, spreads, band.samples, band.seed, deadline, result.summary
        )
        if not uncertainty["enough_samples"]:
            body["cautions"].append(few_samples_caution(uncertainty))
    return scenario_in, body


def few_samples_caution(uncertainty: dict) -> str:
    """The caution for a band from too few samples to hold 80 % of outcomes reliably."""
    return (
        f"The P10-P90 band comes from {uncertainty['samples']} forecasts: it holds 80 % of "
        f"outcomes only to within about {100 * uncertainty['band_content_sd']:.0f} percentage "
        "points (one standard deviation); ask for uncertainty.samples of at least "
        f"{uncertainty['min_stable_samples']} for a stable band."
    )
