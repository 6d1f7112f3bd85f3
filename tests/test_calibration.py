"""Calibration to readings: synthetic readings made by the model itself from a 'true' scenario
whose heat, hydration speed and top insulation differ from the plan, with seeded noise."""

import numpy as np
import pytest

from model.ambient import Ambient
from model.calibration import calibrate, with_measured_air, with_parameters
from model.scenario import Face, Sensor
from model.solver import forecast
from tests.scenarios import slab

PLAN = slab(
    2.0,
    {"top": Face(insulation_r_m2k_w=0.5), "bottom": Face(adiabatic=True)},
    ambient=Ambient(daily_min_c=10.0, daily_max_c=22.0),
    duration_h=168.0,
    sensors=(Sensor("S1", 0.05), Sensor("S2", 1.0), Sensor("S3", 1.95)),
)
TRUTH_VALUES = {"total_heat_factor": 1.15, "tau_factor": 0.85, "top_conductance_factor": 1.6}
NOISE_C = 0.2


def _readings(result, hours, seed=3):
    rng = np.random.default_rng(seed)
    h, s, t = [], [], []
    for sensor in ("S1", "S2", "S3"):
        values = np.interp(hours, result.time_h, result.sensors_c[sensor])
        h += list(hours)
        s += [sensor] * hours.size
        t += list(values + rng.normal(0.0, NOISE_C, hours.size))
    return np.array(h), np.array(s), np.array(t)


@pytest.fixture(scope="module")
def truth():
    return forecast(with_parameters(PLAN, TRUTH_VALUES))


@pytest.fixture(scope="module")
def fitted(truth):
    return calibrate(PLAN, *_readings(truth, np.arange(1.0, 49.0)))


def test_calibration_recovers_the_true_parameters(fitted):
    """48 h of hourly readings at three depths with 0.2 C noise: each parameter within 2 %
    and within 4 standard errors of the truth; misfit close to the noise."""
    for name, true in TRUTH_VALUES.items():
        assert fitted.values[name] == pytest.approx(true, rel=0.02), name
        assert abs(fitted.values[name] - true) < 4 * fitted.standard_errors[name] + 1e-3
    assert fitted.rms_c == pytest.approx(NOISE_C, rel=0.25)


def test_calibrated_forecast_beats_the_plan_on_later_readings(truth, fitted):
    """Held out: readings from 49 h to 168 h, not used in the fit."""
    later = np.arange(49.0, 169.0, 4.0)
    hours, sensors, measured = _readings(truth, later, seed=11)
    plan, calibrated = forecast(PLAN), forecast(fitted.scenario)

    def rms(result):
        predicted = np.concatenate(
            [np.interp(later, result.time_h, result.sensors_c[s]) for s in ("S1", "S2", "S3")]
        )
        return float(np.sqrt(np.mean((predicted - measured) ** 2)))

    assert rms(calibrated) < 0.5
    assert rms(calibrated) < rms(plan) / 5
    assert calibrated.summary.peak_temperature_c == pytest.approx(
        truth.summary.peak_temperature_c, abs=1.0
    )
    assert abs(plan.summary.peak_temperature_c - truth.summary.peak_temperature_c) > 3.0


def test_measured_air_replaces_the_planned_weather_while_it_lasts():
    measured = with_measured_air(PLAN, np.array([0.0, 10.0]), np.array([5.0, 15.0]))
    air = measured.ambient.air_temperature_c(np.array([5.0, 10.0, 30.0]))
    assert air[:2] == pytest.approx([10.0, 15.0])
    assert air[2] == pytest.approx(float(PLAN.ambient.air_temperature_c(30.0)))


def test_too_few_readings_or_unknown_sensor_are_refused():
    with pytest.raises(ValueError, match="cannot fit"):
        calibrate(PLAN, np.array([1.0, 2.0]), np.array(["S1", "S1"]), np.array([20.0, 21.0]))
    with pytest.raises(ValueError, match="not in the scenario"):
        calibrate(PLAN, np.arange(5.0), np.array(["X"] * 5), np.full(5, 20.0))
