"""Monitoring of stored pours: calibrate to the readings so far, re-forecast, summarise status."""

from dataclasses import replace
from datetime import UTC, datetime
from functools import partial
from typing import Any

import numpy as np

from model.calibration import AIR_SENSOR, F_SCALE_C, LOSS, Calibration, calibrate
from model.planning import Limits, solve_control
from model.solver import forecast
from service.convert import forecast_json
from service.errors import InvalidScenarioError
from service.forecasting import check_budget, solve, validated_scenario
from service.parallel import run_many
from service.store import hours_between

EXTRA_HORIZON_H = 48.0
"""A re-forecast always looks at least this far past the latest reading [h]."""
CALIBRATION_RUNS = {"slab": 40, "section": 65, "block": 65}
"""Typical number of whole forecasts a calibration takes, by shape (for the compute budget): 25
to 45 measured for slabs (a batched Jacobian counts as one), about 50 to 65 for sections and
blocks, whose Jacobians take one forecast per fitted parameter (tests/test_calibration.py)."""
MAX_HORIZON_H = 2000.0
"""Longest span from placement a stored pour's forecast and status compute [h]: the longest
``duration_h`` a scenario may ask for (service/schemas.py). Readings later than this are kept
and listed, but the calibration leaves them out (``calibration.readings_after_horizon``), so a
pour placed long ago cannot make a status request forecast years."""
REMOVAL_SEARCH_RUNS = 14
"""Forecasts the earliest-removal search may take (service/planning.py, PLAN_EVALUATIONS)."""
CURRENT_WINDOW_H = 2.0
"""Readings this close to the latest one count as "current" in the status [h]."""
STALE_READINGS_H = 2.0
"""The status flags the readings as stale when the newest concrete reading is older than this,
or there is none this long after placement [h]: a data logger that stopped, or stopped
reaching the service, is a site problem (common practice for hourly loggers, no source)."""


def _arrays(readings: list[dict[str, Any]]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    hours = np.array([r["hours"] for r in readings], dtype=float)
    sensors = np.array([r["sensor"] for r in readings], dtype=str)
    temps = np.array([r["temperature_c"] for r in readings], dtype=float)
    return hours, sensors, temps


def hours_since_placement(pour: dict[str, Any], now: datetime | None = None) -> float:
    """Hours from the pour's placement to ``now`` (default: the current time) [h]."""
    return hours_between(pour["placed_at"], now or datetime.now(UTC))


def pour_forecast(
    pour: dict[str, Any],
    readings: list[dict[str, Any]],
    max_cell_steps: float,
    fit_placement: bool = False,
    deadline: float | None = None,
    now: datetime | None = None,
) -> dict[str, Any]:
    """The forecast body of a stored pour, calibrated to its readings (planned if none);
    ``deadline`` is a ``time.monotonic()`` wall-clock cap, ``now`` the current time (for
    ``now_h``; default the clock)."""
    scenario_in, scenario, origin = validated_scenario(pour["scenario"])
    hours, sensors, temps = _arrays(readings)
    latest_h = float(hours.max()) if hours.size else None
    within = hours <= MAX_HORIZON_H
    after_horizon = int(np.count_nonzero(~within))
    hours, sensors, temps = hours[within], sensors[within], temps[within]
    horizon_h = min(
        max(scenario.duration_h, float(np.ceil((latest_h or 0.0) + EXTRA_HORIZON_H))),
        MAX_HORIZON_H,
    )
    if horizon_h > scenario.duration_h:
        scenario = replace(scenario, duration_h=horizon_h)
    # The calibration's forecasts run only to the latest reading; then the forecast itself and,
    # with top insulation, the removal search run over the whole horizon.
    calibrated_h = float(np.ceil(hours.max() + 1e-9)) if hours.size else 0.0
    if calibrated_h > 0:
        check_budget(
            replace(scenario, duration_h=max(calibrated_h, 1.0)),
            max_cell_steps,
            CALIBRATION_RUNS[scenario.element.shape],
            deadline=deadline,
        )
    searches = REMOVAL_SEARCH_RUNS if scenario.face("top").insulation_r_m2k_w > 0 else 0
    check_budget(scenario, max_cell_steps, 1 + searches, deadline=deadline)
    concrete_readings = int(np.count_nonzero(sensors != AIR_SENSOR))
    calibration: dict[str, Any]
    if concrete_readings == 0:
        calibration = {
            "status": "no readings yet: this is the planned forecast",
            "readings_used": 0,
        }
    else:
        try:
            fit = calibrate(
                scenario,
                hours,
                sensors,
                temps,
                fit_placement,
                deadline,
                partial(run_many, deadline=deadline),
            )
        except ValueError as error:
            raise InvalidScenarioError([{"field": "readings", "message": str(error)}]) from error
        scenario = fit.scenario
        calibration = {
            "status": "calibrated to the readings so far",
            **_calibration_json(fit),
            "air_readings_used": int(np.count_nonzero(sensors == AIR_SENSOR)),
        }
    result = solve(scenario, deadline)
    body = forecast_json(scenario_in, scenario, result, origin)
    limits = scenario_in.limits
    if after_horizon:
        calibration["readings_after_horizon"] = after_horizon
        calibration["note"] = (
            f"{after_horizon} reading(s) later than {MAX_HORIZON_H:g} h after placement are "
            "stored but not used: a forecast spans at most that"
        )
    body["calibration"] = calibration
    body["now_h"] = round(hours_since_placement(pour, now), 3)
    body["latest_reading_h"] = None if latest_h is None else round(latest_h, 3)
    body["differential_limit_exceeded_h"] = result.first_time_above_h(
        "differential_c", limits.max_differential_c
    )
    body["earliest_insulation_removal_h"] = _earliest_removal(scenario, limits, deadline)
    return body


def _calibration_json(fit: Calibration) -> dict[str, Any]:
    """The fitted values, their errors, misfits and suspect sensors of a calibration."""
    return {
        "values": {k: round(v, 4) for k, v in fit.values.items()},
        "standard_errors": {k: round(v, 4) for k, v in fit.standard_errors.items()},
        "rms_by_sensor_c": {k: round(v, 3) for k, v in fit.rms_by_sensor_c.items()},
        "rms_c": round(fit.rms_c, 3),
        "readings_used": fit.readings_used,
        "suspect_sensors": [
            {
                "sensor": s.sensor,
                "reason": s.reason,
                "readings_excluded": s.readings_excluded,
                "rms_misfit_c": round(s.rms_misfit_c, 3),
                "median_error_c": round(s.median_error_c, 3),
                "detail": s.detail,
            }
            for s in fit.suspects
        ],
        "loss": LOSS,
        "loss_scale_c": F_SCALE_C,
        "forecasts_run": fit.forecasts,
        "coarse_forecasts_run": fit.coarse_forecasts,
    }


def _earliest_removal(scenario: Any, limits: Any, deadline: float | None) -> float | None:
    if scenario.face("top").insulation_r_m2k_w <= 0:
        return None
    try:
        found = solve_control(
            scenario,
            "earliest_insulation_removal_h",
            Limits(limits.max_temperature_c, limits.max_differential_c),
            partial(forecast, deadline=deadline),
        )
    except ValueError:
        return None
    return found.value


def planned_removals(scenario: dict[str, Any]) -> list[dict[str, Any]]:
    """Insulation and form removals the stored scenario plans: [{face, what, at_h}], by time."""
    faces = scenario.get("faces") or {}
    planned = [
        {"face": face, "what": what, "at_h": given[f"{what}_removal_h"]}
        for face, given in faces.items()
        if isinstance(given, dict)
        for what in ("insulation", "formwork")
        if given.get(f"{what}_removal_h") is not None
    ]
    return sorted(planned, key=lambda r: r["at_h"])


def _limits_over(
    current: dict[str, float], limits: dict[str, Any]
) -> tuple[float | None, float | None, list[str]]:
    """Measured maximum and differential of the current readings, and the limits they exceed."""
    measured_max = max(current.values()) if current else None
    measured_diff = (max(current.values()) - min(current.values())) if len(current) > 1 else None
    over = []
    if measured_max is not None and measured_max > limits["max_temperature_c"]["limit_c"]:
        over.append("max_temperature_c")
    if measured_diff is not None and measured_diff > limits["max_differential_c"]["limit_c"]:
        over.append("max_differential_c")
    return measured_max, measured_diff, over


def pour_status(
    pour: dict[str, Any],
    readings: list[dict[str, Any]],
    body: dict[str, Any],
    now: datetime | None = None,
) -> dict[str, Any]:
    """Compact status for dashboards, from the readings and the calibrated forecast body.

    Says separately what the current readings show (``limits_measured_exceeded``) and what the
    forecast expects (``limits_forecast_exceeded``, and ``limits_forecast_unsettled`` for a
    limit not settled within the forecast); ``limits_met`` is true only when neither applies.
    ``now_h`` is the time since placement now; ``latest_reading_age_h`` how old the newest
    concrete reading is, and ``readings_stale`` whether it is older than STALE_READINGS_H.
    """
    summary = body["summary"]
    limits = summary["limits"]
    current = _current(readings)
    measured_max, measured_diff, measured_over = _limits_over(current, limits)
    forecast_over = [k for k, v in limits.items() if v.get("verdict") == "exceeded"]
    unsettled = [k for k, v in limits.items() if v.get("verdict") == "unsettled"]
    now_h = hours_since_placement(pour, now)
    concrete = [r["hours"] for r in readings if r["sensor"] != AIR_SENSOR]
    latest_h = max(concrete) if concrete else None
    age_h = None if latest_h is None else max(now_h - latest_h, 0.0)
    stale = (age_h if age_h is not None else now_h) > STALE_READINGS_H
    removal = body["earliest_insulation_removal_h"]
    return {
        "id": pour["id"],
        "name": pour["name"],
        "now_h": round(now_h, 2),
        "latest_reading_h": None if latest_h is None else round(latest_h, 2),
        "latest_reading_age_h": None if age_h is None else round(age_h, 2),
        "readings_stale": bool(stale),
        "measured_max_c": None if measured_max is None else round(measured_max, 2),
        "measured_differential_c": None if measured_diff is None else round(measured_diff, 2),
        "forecast_peak_c": summary["peak_temperature_c"],
        "forecast_peak_time_h": summary["peak_time_h"],
        "forecast_max_differential_c": summary["max_differential_c"],
        "limits_met": not (measured_over or forecast_over or unsettled),
        "limit_measured_exceeded": bool(measured_over),
        "limit_forecast_exceeded": bool(forecast_over),
        "limits_measured_exceeded": measured_over,
        "limits_forecast_exceeded": forecast_over,
        "limits_forecast_unsettled": unsettled,
        "planned_removals": planned_removals(pour["scenario"]),
        "earliest_insulation_removal_h": removal,
        "hours_until_insulation_removal": (
            None if removal is None else round(max(removal - now_h, 0.0), 1)
        ),
        "calibration": body["calibration"].get("status"),
        "suspect_sensors": body["calibration"].get("suspect_sensors", []),
        "cautions": body["cautions"],
    }


def _current(readings: list[dict[str, Any]]) -> dict[str, float]:
    """Latest concrete reading of each sensor within CURRENT_WINDOW_H of the latest one."""
    concrete = [r for r in readings if r["sensor"] != AIR_SENSOR]
    if not concrete:
        return {}
    latest = max(r["hours"] for r in concrete)
    current: dict[str, tuple[float, float]] = {}
    for r in concrete:
        if r["hours"] >= latest - CURRENT_WINDOW_H:
            seen = current.get(r["sensor"])
            if seen is None or r["hours"] > seen[0]:
                current[r["sensor"]] = (r["hours"], r["temperature_c"])
    return {s: t for s, (_, t) in current.items()}


LIMIT_WORDS = {"max_temperature_c": "max temperature", "max_differential_c": "differential"}


def _value(value: float | None, unit: str = " C") -> str:
    return "no reading" if value is None else f"{value:g}{unit}"


def status_line(status: dict[str, Any]) -> str:
    """One line for cron mail and logs: measured and forecast verdicts apart, planned and
    earliest insulation removal, how old the newest reading is. Never prints ``None``."""
    words = LIMIT_WORDS
    measured_over = status.get("limits_measured_exceeded", [])
    forecast_over = status.get("limits_forecast_exceeded", [])
    unsettled = status.get("limits_forecast_unsettled", [])
    measured = (
        f"MEASURED LIMIT EXCEEDED ({', '.join(words.get(k, k) for k in measured_over)})"
        if measured_over
        else "measured within limits"
    )
    if forecast_over:
        forecast = f"FORECAST TO EXCEED ({', '.join(words.get(k, k) for k in forecast_over)})"
    elif unsettled:
        forecast = (
            f"forecast NOT SETTLED ({', '.join(words.get(k, k) for k in unsettled)}: "
            "extend duration_h)"
        )
    else:
        forecast = "forecast within limits"
    planned = status.get("planned_removals") or []
    removal = (
        "planned removals: "
        + ", ".join(f"{r['face']} {r['what']} at {r['at_h']:g} h" for r in planned)
        if planned
        else "no removal planned"
    )
    earliest = status.get("earliest_insulation_removal_h")
    if earliest is not None:
        removal += f"; insulation may come off from {earliest:g} h"
    if status.get("latest_reading_age_h") is None:
        readings = "no readings yet"
    else:
        readings = f"newest reading {status['latest_reading_age_h']:g} h old"
    if status.get("readings_stale"):
        readings = f"READINGS STALE ({readings}: check the logger)"
    peak_time = status["forecast_peak_time_h"]
    return (
        f"{status['name']} at {status['now_h']:.1f} h: measured max "
        f"{_value(status['measured_max_c'])}, differential "
        f"{_value(status['measured_differential_c'])}; forecast peak "
        f"{_value(status['forecast_peak_c'])} at {peak_time:g} h, max differential "
        f"{_value(status['forecast_max_differential_c'])}; {measured}; {forecast}; {removal}; "
        f"{readings}"
    )
