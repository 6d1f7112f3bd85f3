"""Monitoring of stored pours: calibrate to the readings so far, re-forecast, summarise status."""

from dataclasses import replace
from functools import partial
from typing import Any

import numpy as np

from model.calibration import AIR_SENSOR, F_SCALE_C, LOSS, Calibration, calibrate
from model.planning import Limits, solve_control
from model.solver import forecast
from service.convert import forecast_json
from service.errors import InvalidScenarioError
from service.forecasting import check_budget, solve, validated_scenario

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
CURRENT_WINDOW_H = 2.0
"""Readings this close to the latest one count as "current" in the status [h]."""


def _arrays(readings: list[dict[str, Any]]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    hours = np.array([r["hours"] for r in readings], dtype=float)
    sensors = np.array([r["sensor"] for r in readings], dtype=str)
    temps = np.array([r["temperature_c"] for r in readings], dtype=float)
    return hours, sensors, temps


def pour_forecast(
    pour: dict[str, Any],
    readings: list[dict[str, Any]],
    max_cell_steps: float,
    fit_placement: bool = False,
    deadline: float | None = None,
) -> dict[str, Any]:
    """The forecast body of a stored pour, calibrated to its readings (planned if none);
    ``deadline`` is a ``time.monotonic()`` wall-clock cap."""
    scenario_in, scenario, origin = validated_scenario(pour["scenario"])
    hours, sensors, temps = _arrays(readings)
    now_h = float(hours.max()) if hours.size else 0.0
    within = hours <= MAX_HORIZON_H
    after_horizon = int(np.count_nonzero(~within))
    hours, sensors, temps = hours[within], sensors[within], temps[within]
    horizon_h = min(
        max(scenario.duration_h, float(np.ceil(now_h + EXTRA_HORIZON_H))), MAX_HORIZON_H
    )
    if horizon_h > scenario.duration_h:
        scenario = replace(scenario, duration_h=horizon_h)
    check_budget(scenario, max_cell_steps, CALIBRATION_RUNS[scenario.element.shape])
    concrete_readings = int(np.count_nonzero(sensors != AIR_SENSOR))
    calibration: dict[str, Any]
    if concrete_readings == 0:
        calibration = {
            "status": "no readings yet: this is the planned forecast",
            "readings_used": 0,
        }
    else:
        try:
            fit = calibrate(scenario, hours, sensors, temps, fit_placement, deadline)
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
    body["now_h"] = round(now_h, 3)
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


def pour_status(
    pour: dict[str, Any], readings: list[dict[str, Any]], body: dict[str, Any]
) -> dict[str, Any]:
    """Compact status for dashboards, from the readings and the calibrated forecast body."""
    summary = body["summary"]
    limits = summary["limits"]
    current = _current(readings)
    measured_max = max(current.values()) if current else None
    measured_diff = (max(current.values()) - min(current.values())) if len(current) > 1 else None
    t_limit = limits["max_temperature_c"]["limit_c"]
    d_limit = limits["max_differential_c"]["limit_c"]
    measured_over = (measured_max is not None and measured_max > t_limit) or (
        measured_diff is not None and measured_diff > d_limit
    )
    forecast_over = not (limits["max_temperature_c"]["met"] and limits["max_differential_c"]["met"])
    removal = body["earliest_insulation_removal_h"]
    return {
        "id": pour["id"],
        "name": pour["name"],
        "now_h": body["now_h"],
        "measured_max_c": None if measured_max is None else round(measured_max, 2),
        "measured_differential_c": None if measured_diff is None else round(measured_diff, 2),
        "forecast_peak_c": summary["peak_temperature_c"],
        "forecast_peak_time_h": summary["peak_time_h"],
        "forecast_max_differential_c": summary["max_differential_c"],
        "limits_met": not (measured_over or forecast_over),
        "limit_measured_exceeded": bool(measured_over),
        "limit_forecast_exceeded": bool(forecast_over),
        "hours_until_insulation_removal": (
            None if removal is None else round(max(removal - body["now_h"], 0.0), 1)
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


def status_line(status: dict[str, Any]) -> str:
    """One line for cron mail and logs."""
    verdict = "LIMIT EXCEEDED" if not status["limits_met"] else "within limits"
    removal = status["hours_until_insulation_removal"]
    return (
        f"{status['name']} at {status['now_h']:.1f} h: measured max "
        f"{status['measured_max_c']} C, differential {status['measured_differential_c']} C; "
        f"forecast peak {status['forecast_peak_c']} C at {status['forecast_peak_time_h']} h, "
        f"max differential {status['forecast_max_differential_c']} C; {verdict}; insulation "
        f"removal {'not planned' if removal is None else f'in {removal} h'}"
    )
