"""Calibration to readings. The reference everywhere is a synthetic truth: a forecast of the
plan with known parameters (heat, hydration speed, top and side conductance) changed, sampled at
the sensors with seeded noise; site faults (a stuck channel, an offset, dropped hours) are
injected into those readings. The calibrated forecast is compared with the truth's own
forecast."""

import numpy as np
import pytest

from model.ambient import Ambient
from model.calibration import (
    STUCK_MIN_H,
    calibrate,
    with_measured_air,
    with_parameters,
    without_stuck_runs,
)
from model.scenario import Element, Face, Resolution, Scenario, Sensor
from model.solver import forecast
from tests.scenarios import concrete, slab

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


# --- Site faults: a stuck channel, an offset, dropped hours ------------------------------------

FOUR_SENSORS = (Sensor("S1", 0.05), Sensor("S2", 0.7), Sensor("S3", 1.3), Sensor("S4", 1.95))
PLAN4 = slab(
    2.0,
    {"top": Face(insulation_r_m2k_w=0.5), "bottom": Face(adiabatic=True)},
    ambient=Ambient(daily_min_c=10.0, daily_max_c=22.0),
    duration_h=168.0,
    sensors=FOUR_SENSORS,
)
STUCK_FROM_H, STUCK_AT_C, OFFSET_C = 12.0, 31.4, 2.0


def _site_readings(result, sensors, hours, stuck=None, offset=None, seed=7):
    """Readings of the true pour at 0.1 C resolution with 0.2 C noise; ``stuck`` reads
    STUCK_AT_C from STUCK_FROM_H on, ``offset`` reads OFFSET_C high."""
    rng = np.random.default_rng(seed)
    h, s, t = [], [], []
    for sensor in sensors:
        values = np.interp(hours, result.time_h, result.sensors_c[sensor])
        values = values + rng.normal(0.0, NOISE_C, hours.size)
        if sensor == stuck:
            values = np.where(hours >= STUCK_FROM_H, STUCK_AT_C, values)
        if sensor == offset:
            values = values + OFFSET_C
        h += list(hours)
        s += [sensor] * hours.size
        t += list(np.round(values, 1))
    return np.array(h), np.array(s), np.array(t)


def _dropped_hours(last_h):
    """Hourly readings to ``last_h`` with the logger down from 20 h to 25 h and 37 h to 39 h."""
    hours = np.arange(1.0, last_h + 1.0)
    return hours[~(((hours >= 20) & (hours < 26)) | ((hours >= 37) & (hours < 40)))]


@pytest.fixture(scope="module")
def truth4():
    return forecast(with_parameters(PLAN4, TRUTH_VALUES))


@pytest.fixture(scope="module")
def faulty_fit(truth4):
    readings = _site_readings(truth4, ("S1", "S2", "S3", "S4"), _dropped_hours(48), "S2", "S3")
    return calibrate(PLAN4, *readings)


def test_stuck_and_offset_sensors_are_named_with_their_reason(faulty_fit):
    """Of four sensors S2 sticks at 31.4 C from 12 h and S3 reads 2 C high: both are named,
    S2 as stuck (its readings from 12 h on left out), S3 as an offset of about +2 C (all its
    readings left out); the good sensors S1 and S4 are not named."""
    reasons = {s.sensor: s.reason for s in faulty_fit.suspects}
    assert reasons == {"S2": "stuck", "S3": "offset"}
    stuck, offset = sorted(faulty_fit.suspects, key=lambda s: s.sensor)
    readings = _dropped_hours(48)
    assert stuck.readings_excluded == np.count_nonzero(readings >= STUCK_FROM_H)
    assert offset.readings_excluded == readings.size
    assert offset.median_error_c == pytest.approx(OFFSET_C, abs=0.3)
    assert faulty_fit.readings_used == 2 * readings.size + np.count_nonzero(readings < STUCK_FROM_H)
    assert faulty_fit.rms_c < 0.3


def test_calibration_survives_a_stuck_and_an_offset_sensor(truth4, faulty_fit):
    """Reference: the true pour's own forecast. The calibrated forecast is within 1 C of it
    over 168 h at the good sensors and at the hottest point, and its peak within 1 C, while
    the plan's peak is more than 3 C off."""
    calibrated = forecast(faulty_fit.scenario)
    for sensor in ("S1", "S4"):
        gap = np.abs(np.array(calibrated.sensors_c[sensor]) - np.array(truth4.sensors_c[sensor]))
        assert gap.max() < 1.0, sensor
    assert np.abs(np.array(calibrated.core_c) - np.array(truth4.core_c)).max() < 1.0
    peak = truth4.summary.peak_temperature_c
    assert calibrated.summary.peak_temperature_c == pytest.approx(peak, abs=1.0)
    assert abs(forecast(PLAN4).summary.peak_temperature_c - peak) > 3.0


def test_sound_sensors_are_not_flagged(fitted):
    """Three sound sensors with 0.2 C noise: none is named."""
    assert fitted.suspects == ()


def test_a_flat_run_counts_as_stuck_only_while_the_forecast_moves():
    """Flat-line rule: eight hourly readings at one value are stuck if the forecast there
    rises 5 C over them, not if it stays within 0.5 C; a flat run shorter than STUCK_MIN_H is
    never stuck."""
    hours = np.arange(8.0)
    sensors = np.array(["A"] * 8)
    flat = np.full(8, 30.0)
    used, suspects = without_stuck_runs(hours, sensors, flat, 30.0 + 5.0 * hours / 7.0)
    assert not used.any() and [s.reason for s in suspects] == ["stuck"]
    used, suspects = without_stuck_runs(hours, sensors, flat, 30.0 + 0.5 * hours / 7.0)
    assert used.all() and suspects == []
    short = hours[: int(STUCK_MIN_H)]
    used, _ = without_stuck_runs(short, sensors[: short.size], flat[: short.size], 5.0 * short)
    assert used.all()


# --- Sections and blocks: the side faces' conductance is fitted too ----------------------------

COARSE = Resolution(
    surface_cell_m=0.05,
    growth=1.5,
    max_cell_m=0.4,
    min_cells_across=4,
    error_tolerance_c=0.005,
)
"""A coarse grid, so the 3D calibration stays within seconds; calibration and truth use the
same grid, so the comparison checks the fit, not the discretisation."""
SIDE_TRUTH = {
    "total_heat_factor": 1.12,
    "tau_factor": 0.85,
    "top_conductance_factor": 1.5,
    "side_conductance_factor": 0.5,
}
FORMED = Face(formwork_r_m2k_w=0.15)


def _formed_element(element, sensors, sides):
    return Scenario(
        element=element,
        concrete=concrete(),
        ambient=Ambient(daily_min_c=8.0, daily_max_c=20.0, wind_m_s=3.0),
        faces={
            "top": Face(insulation_r_m2k_w=0.5),
            "bottom": Face(adiabatic=True),
            **dict.fromkeys(sides, FORMED),
        },
        placement_c=18.0,
        duration_h=120.0,
        sensors=sensors,
        resolution=COARSE,
    )


def _check_side_calibration(plan):
    """48 h of hourly readings of a true pour whose forms hold heat twice as well as planned
    (side conductance x0.5), more heat and faster hydration, top conductance x1.5; reference:
    the true pour's forecast. Peak within 1 C (the plan is more than 5 C off), the side factor
    within 10 %, no sensor flagged."""
    truth = forecast(with_parameters(plan, SIDE_TRUTH))
    ids = tuple(s.id for s in plan.sensors)
    fit = calibrate(plan, *_site_readings(truth, ids, np.arange(1.0, 49.0), seed=3))
    calibrated = forecast(fit.scenario)
    peak = truth.summary.peak_temperature_c
    assert calibrated.summary.peak_temperature_c == pytest.approx(peak, abs=1.0)
    assert abs(forecast(plan).summary.peak_temperature_c - peak) > 5.0
    assert fit.values["side_conductance_factor"] == pytest.approx(0.5, rel=0.1)
    assert fit.suspects == ()
    return fit


def test_section_calibrates_its_side_conductance():
    """A 1.2 m wide, 2.5 m tall wall section (2D): core, under the top, 50 mm inside a side,
    near the bottom corner."""
    plan = _formed_element(
        Element("section", 2.5, width_m=1.2),
        (Sensor("C", 1.25), Sensor("T", 0.05), Sensor("S", 1.25, 0.55), Sensor("B", 2.2, 0.3)),
        ("left", "right"),
    )
    _check_side_calibration(plan)


def three_sensor_wall() -> Scenario:
    """A 1.2 m wide, 2.5 m tall formed wall section with core, top and side sensors."""
    return _formed_element(
        Element("section", 2.5, width_m=1.2),
        (Sensor("C", 1.25), Sensor("T", 0.05), Sensor("S", 1.25, 0.55)),
        ("left", "right"),
    )


def test_coarse_grid_jacobians_fit_what_own_grid_jacobians_fit():
    """The Jacobians' forward differences run on the coarse grid (``Scenario.coarsened``), the
    residuals on the pour's own: the fitted values must be those of a fit whose differences
    run on its own grid (measured: equal to 1e-4 here and on the pier example)."""
    plan = three_sensor_wall()
    truth = forecast(with_parameters(plan, SIDE_TRUTH))
    readings = _site_readings(truth, ("C", "T", "S"), np.arange(1.0, 49.0), seed=5)
    coarse = calibrate(plan, *readings)
    own = calibrate(plan, *readings, coarse_jacobian=False)
    assert coarse.coarse_forecasts > 0 and own.coarse_forecasts == 0
    for name, value in own.values.items():
        assert coarse.values[name] == pytest.approx(value, rel=2e-3), name


def test_block_calibrates_to_its_peak():
    """A 4 x 3 x 1.5 m block (3D, a quarter meshed): core, under the top, 50 mm inside a side,
    near a vertical edge."""
    plan = _formed_element(
        Element("block", 1.5, width_m=3.0, length_m=4.0),
        (
            Sensor("C", 0.75),
            Sensor("T", 0.05),
            Sensor("S", 0.75, 1.45),
            Sensor("E", 0.75, 1.45, 1.95),
        ),
        ("left", "right", "front", "back"),
    )
    _check_side_calibration(plan)


def test_slabs_fit_no_side_conductance(fitted):
    assert "side_conductance_factor" not in fitted.values
