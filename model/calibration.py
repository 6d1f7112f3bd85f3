"""Calibration of a scenario to measured temperatures, for re-forecasting a pour in progress.

The uncertain inputs (the total heat Hu and time parameter tau of hydration, the overall
conductance of the top face and, optionally, the placement temperature) are fitted to the
readings so far by bounded nonlinear least squares (``scipy.optimize.least_squares``, trust
region reflective), each residual a whole forecast at the sensor positions (for slabs, the
Jacobian's forward differences are forecast together as one batch); the standard errors
come from the Jacobian at the solution, ``sqrt(diag((J^T J)^-1) * SSR / (n - p))`` (the usual
linearised covariance, e.g. Bates & Watts, "Nonlinear Regression Analysis and Its
Applications", 1988, section 2.3). Measured air temperatures replace the planned ones where
they exist.
"""

from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray
from scipy.optimize import least_squares

from model.ambient import Ambient
from model.scenario import Scenario, Variations
from model.solver import forecast, forecast_batch

AIR_SENSOR = "air"
"""Sensor id of measured air temperatures."""
DIFF_STEP = 1e-3
"""Relative step of the finite differences of the Jacobian [-]."""


@dataclass(frozen=True)
class Parameter:
    """A fitted input: name, starting value, bounds [unit of the input]."""

    name: str
    start: float
    low: float
    high: float
    scale: float


PARAMETERS = (
    Parameter("total_heat_factor", 1.0, 0.5, 1.6, 0.1),
    Parameter("tau_factor", 1.0, 0.4, 2.5, 0.1),
    Parameter("top_conductance_factor", 1.0, 0.2, 5.0, 0.3),
    Parameter("placement_offset_c", 0.0, -8.0, 8.0, 1.0),
)
"""Multipliers of Hu, tau and the top face's conductance [-], placement shift [C]."""


@dataclass(frozen=True)
class Calibration:
    """Result of a calibration.

    Attributes
    ----------
    values : fitted value of each parameter (see PARAMETERS)
    standard_errors : their standard errors from the Jacobian
    rms_by_sensor_c : root-mean-square misfit per sensor [C]
    rms_c : overall root-mean-square misfit [C]
    readings_used : number of concrete readings fitted
    scenario : the scenario with the fitted values (and measured air temperatures)
    """

    values: dict[str, float]
    standard_errors: dict[str, float]
    rms_by_sensor_c: dict[str, float]
    rms_c: float
    readings_used: int
    scenario: Scenario


def with_parameters(scenario: Scenario, values: dict[str, float]) -> Scenario:
    """The scenario with calibration parameters applied (missing ones keep their neutral value)."""
    return variations_of([values]).scenario(scenario, 0)


def with_measured_air(
    scenario: Scenario, hours: NDArray[np.float64], air_c: NDArray[np.float64]
) -> Scenario:
    """The scenario whose air temperature follows the measurements while they last (linear
    between readings) and the planned weather after the last one, as an hourly series."""
    if hours.size == 0:
        return scenario
    order = np.argsort(hours)
    hours, air_c = hours[order], air_c[order]
    grid = np.arange(0.0, np.ceil(scenario.duration_h) + 1.0)
    planned = scenario.ambient.air_temperature_c(grid)
    measured = np.interp(grid, hours, air_c)
    series = np.where(grid <= hours[-1], measured, planned)
    ambient = Ambient(
        air_c=tuple(float(t) for t in series),
        wind_m_s=scenario.ambient.wind_m_s,
        solar_w_m2=scenario.ambient.solar_w_m2,
        solar_peak_w_m2=scenario.ambient.solar_peak_w_m2,
        placement_clock_h=scenario.ambient.placement_clock_h,
    )
    return replace(scenario, ambient=ambient)


def predicted_c(
    scenario: Scenario,
    hours: NDArray[np.float64],
    sensors: NDArray[np.str_],
    deadline: float | None = None,
) -> NDArray[np.float64]:
    """Forecast temperatures at the reading times and sensors [C]."""
    horizon = float(np.ceil(hours.max() + 1e-9))
    result = forecast(
        replace(scenario, duration_h=max(horizon, 1.0), output_interval_h=1.0), deadline
    )
    out = np.empty(hours.size)
    for sensor in np.unique(sensors):
        mask = sensors == sensor
        out[mask] = np.interp(hours[mask], result.time_h, result.sensors_c[str(sensor)])
    return out


def predicted_batch_c(
    scenario: Scenario,
    variations: Variations,
    hours: NDArray[np.float64],
    sensors: NDArray[np.str_],
    deadline: float | None = None,
) -> NDArray[np.float64]:
    """Forecast temperatures at the reading times and sensors for every variant of a slab,
    stepped together as one batch [C], shape (variants, readings)."""
    horizon = float(np.ceil(hours.max() + 1e-9))
    batch = forecast_batch(
        replace(scenario, duration_h=max(horizon, 1.0), output_interval_h=1.0),
        variations,
        deadline,
    )
    out = np.empty((variations.size, hours.size))
    for sensor in np.unique(sensors):
        mask = sensors == sensor
        for row, series in enumerate(batch.sensors_c[str(sensor)]):
            out[row, mask] = np.interp(hours[mask], batch.time_h, series)
    return out


def variations_of(values: list[dict[str, float]]) -> Variations:
    """Calibration parameter sets as batch variants (missing ones keep their neutral value)."""

    def column(name: str, neutral: float) -> NDArray[np.float64]:
        return np.array([v.get(name, neutral) for v in values])

    return Variations(
        placement_shift_c=column("placement_offset_c", 0.0),
        air_shift_c=np.zeros(len(values)),
        total_heat_factor=column("total_heat_factor", 1.0),
        tau_factor=column("tau_factor", 1.0),
        top_conductance_factor=column("top_conductance_factor", 1.0),
    )


def calibrate(
    scenario: Scenario,
    hours: NDArray[np.float64],
    sensors: NDArray[np.str_],
    temperature_c: NDArray[np.float64],
    fit_placement: bool = False,
    deadline: float | None = None,
) -> Calibration:
    """Fit the uncertain inputs to readings (air readings, sensor "air", drive the weather);
    ``deadline`` as for :func:`model.solver.forecast`.

    Raises
    ------
    ValueError
        With fewer concrete readings than parameters, or a sensor the scenario does not have.
    """
    hours, temperature_c = np.asarray(hours, float), np.asarray(temperature_c, float)
    sensors = np.asarray(sensors).astype(str)
    air = sensors == AIR_SENSOR
    base = with_measured_air(scenario, hours[air], temperature_c[air])
    hours, sensors, measured = hours[~air], sensors[~air], temperature_c[~air]
    known = {s.id for s in scenario.sensors}
    unknown = sorted(set(sensors) - known)
    if unknown:
        raise ValueError(f"readings from sensors not in the scenario: {unknown}")
    fitted = [p for p in PARAMETERS if fit_placement or p.name != "placement_offset_c"]
    if hours.size <= len(fitted):
        raise ValueError(f"{hours.size} concrete readings cannot fit {len(fitted)} parameters")

    def residuals(x: NDArray[np.float64]) -> NDArray[np.float64]:
        values = {p.name: v for p, v in zip(fitted, x, strict=True)}
        return predicted_c(with_parameters(base, values), hours, sensors, deadline) - measured

    def batch_jacobian(x: NDArray[np.float64]) -> NDArray[np.float64]:
        """Forward differences from one batch: the point and each parameter nudged by
        ``DIFF_STEP`` (relative, at least that much absolute; backwards at an upper bound),
        all on the same time steps, so the differences carry no step-to-step noise."""
        nudges = DIFF_STEP * np.maximum(1.0, np.abs(x))
        nudges = np.where(x + nudges > [p.high for p in fitted], -nudges, nudges)
        points = [x] + [
            x + nudge * unit for nudge, unit in zip(nudges, np.eye(x.size), strict=True)
        ]
        values = [{p.name: v for p, v in zip(fitted, point, strict=True)} for point in points]
        predicted = predicted_batch_c(base, variations_of(values), hours, sensors, deadline)
        return ((predicted[1:] - predicted[0]) / nudges[:, None]).T

    solution = least_squares(
        residuals,
        [p.start for p in fitted],
        jac=batch_jacobian if scenario.element.shape == "slab" else "2-point",
        bounds=([p.low for p in fitted], [p.high for p in fitted]),
        x_scale=[p.scale for p in fitted],
        diff_step=DIFF_STEP,
        xtol=1e-6,
        ftol=1e-8,
        max_nfev=80,
    )
    dof = max(hours.size - len(fitted), 1)
    variance = float(solution.fun @ solution.fun) / dof
    try:
        covariance = np.linalg.inv(solution.jac.T @ solution.jac) * variance
        errors = np.sqrt(np.clip(np.diag(covariance), 0.0, None))
    except np.linalg.LinAlgError:
        errors = np.full(len(fitted), np.nan)
    values = {p.name: float(v) for p, v in zip(fitted, solution.x, strict=True)}
    rms = {
        str(s): float(np.sqrt(np.mean(solution.fun[sensors == s] ** 2))) for s in np.unique(sensors)
    }
    return Calibration(
        values=values,
        standard_errors={p.name: float(e) for p, e in zip(fitted, errors, strict=True)},
        rms_by_sensor_c=rms,
        rms_c=float(np.sqrt(np.mean(solution.fun**2))),
        readings_used=int(hours.size),
        scenario=with_parameters(base, values),
    )
