"""Variants of a slab stepped together as one batch agree with separate forecasts of each."""

import numpy as np
import pytest

from model.ambient import Ambient
from model.scenario import Element, Face, Ground, Scenario, Sensor, Variations
from model.solver import forecast, forecast_batch
from model.uncertainty import Spreads, sample_variations
from tests.scenarios import concrete, slab

WINDY_CYCLE = Ambient(daily_min_c=6.0, daily_max_c=20.0, wind_m_s=4.0)


def _scenarios() -> list[Scenario]:
    blanket_removed = slab(
        1.5,
        {
            "top": Face(insulation_r_m2k_w=0.6, insulation_removal_h=72.0),
            "bottom": Face(adiabatic=True),
        },
        ambient=WINDY_CYCLE,
        placement_c=18.0,
        duration_h=120.0,
        sensors=(Sensor("mid", 0.75), Sensor("near top", 0.05)),
        concrete=concrete(constant=False),
    )
    on_ground = Scenario(
        element=Element("slab", 1.0),
        concrete=concrete(),
        ambient=WINDY_CYCLE,
        faces={"top": Face(insulation_r_m2k_w=0.3)},
        ground=Ground(depth_m=2.0, deep_temperature_c=11.0),
        placement_c=22.0,
        duration_h=96.0,
    )
    return [blanket_removed, on_ground]


@pytest.mark.parametrize("scenario", _scenarios(), ids=["blanket removed", "on ground"])
def test_batch_rows_match_separate_forecasts(scenario):
    """Five sampled variants (placement, air shift, Hu, tau): every row of the batch within
    0.05 C of the separate forecast of that variant, on the summary and on every reported
    series; the batch's shared steps are at least as fine as each variant's own."""
    variations = sample_variations(Spreads(1.5, 3.0, 0.08, 0.15), 5, seed=3)
    batch = forecast_batch(scenario, variations)
    for i in range(variations.size):
        single = forecast(variations.scenario(scenario, i))
        assert single.summary.peak_temperature_c == pytest.approx(
            batch.peak_temperature_c[i], abs=0.05
        )
        assert single.summary.max_differential_c == pytest.approx(
            batch.max_differential_c[i], abs=0.05
        )
        np.testing.assert_allclose(batch.time_h, single.time_h)
        for name in ("core_c", "surface_c", "differential_c"):
            np.testing.assert_allclose(getattr(batch, name)[i], getattr(single, name), atol=0.05)
        for sensor, series in single.sensors_c.items():
            np.testing.assert_allclose(batch.sensors_c[sensor][i], series, atol=0.05)


def test_identical_variants_give_identical_rows():
    scenario = _scenarios()[0]
    batch = forecast_batch(scenario, Variations.none(3))
    assert np.ptp(batch.core_c, axis=0).max() == 0.0
    assert np.ptp(batch.peak_temperature_c) == 0.0


def test_variants_move_the_forecast_the_expected_way():
    """More heat, a warmer placement and warmer air each raise the peak; a larger tau (slower
    hydration) delays it."""
    scenario = _scenarios()[0]
    variations = Variations(
        placement_shift_c=np.array([0.0, 2.0, 0.0, 0.0, 0.0]),
        air_shift_c=np.array([0.0, 0.0, 3.0, 0.0, 0.0]),
        total_heat_factor=np.array([1.0, 1.0, 1.0, 1.1, 1.0]),
        tau_factor=np.array([1.0, 1.0, 1.0, 1.0, 1.3]),
    )
    batch = forecast_batch(scenario, variations)
    peaks = batch.peak_temperature_c
    assert peaks[1] > peaks[0] and peaks[2] > peaks[0] and peaks[3] > peaks[0]
    assert batch.peak_time_h[4] > batch.peak_time_h[0]


def test_batches_are_for_slabs_only():
    section = Scenario(
        element=Element("section", 1.0, width_m=2.0),
        concrete=concrete(),
        ambient=Ambient(air_c=15.0),
        duration_h=24.0,
    )
    with pytest.raises(ValueError, match="slabs"):
        forecast_batch(section, Variations.none(2))
