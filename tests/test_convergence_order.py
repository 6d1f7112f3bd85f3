"""Observed order of convergence in space and time, and the accuracy of the default resolution.

The scheme is second order in space (cell-centred finite volumes) and in time (BDF2), so the
error should fall about fourfold each time the cell size or the step is halved: the slope of
log(error) against log(h) is checked to lie within 1.7 to 2.3.
"""

import numpy as np
import pytest

from model.ambient import Ambient
from model.scenario import Element, Face, Ground, Resolution, Scenario
from model.solver import forecast
from tests.reference import analytic
from tests.scenarios import (
    CONDUCTIVITY,
    DIFFUSIVITY,
    NO_HEAT,
    concrete,
    depth_sensors,
    slab,
    uniform,
)

DEPTHS = [0.0, 0.05, 0.25, 0.6, 1.0]


def _slope(errors: list[float]) -> np.ndarray:
    return np.log2(np.array(errors[:-1]) / np.array(errors[1:]))


def test_space_order_against_the_biot_series():
    """Convective 1 m slab, adiabatic bottom (C&J 3.11), tiny fixed steps so time error is nil."""
    errors = []
    for cells in (20, 40, 80):
        result = forecast(
            slab(
                1.0,
                {"top": Face(film_coefficient_w_m2k=10.0), "bottom": Face(adiabatic=True)},
                concrete=concrete(NO_HEAT),
                ambient=Ambient(air_c=5.0),
                placement_c=35.0,
                duration_h=24.0,
                output_interval_h=24.0,
                sensors=depth_sensors(DEPTHS),
                resolution=uniform(1.0 / cells, 0.02),
            )
        )
        computed = np.array([v[-1] for v in result.sensors_c.values()])
        exact = analytic.slab_convective_faces_c(
            1.0 - np.array(DEPTHS), 24 * 3600.0, 1.0, CONDUCTIVITY, DIFFUSIVITY, 10.0, 35.0, 5.0
        )
        errors.append(float(np.max(np.abs(computed - exact))))
    assert np.all((_slope(errors) > 1.7) & (_slope(errors) < 2.3)), errors


def test_time_order_with_hydration():
    """Hydrating 2 m slab on a fixed 40-cell grid; fixed steps 2, 1, 0.5 h against 1/32 h."""

    def run(step_h: float):
        return forecast(
            slab(
                2.0,
                {
                    "top": Face(film_coefficient_w_m2k=10.0, insulation_r_m2k_w=0.3),
                    "bottom": Face(adiabatic=True),
                },
                duration_h=96.0,
                output_interval_h=4.0,
                sensors=depth_sensors([0.05, 1.0, 2.0]),
                resolution=uniform(0.05, step_h),
            )
        )

    reference = run(1.0 / 32.0)

    def error(result) -> float:
        return max(
            float(np.max(np.abs(result.sensors_c[s] - reference.sensors_c[s])))
            for s in reference.sensors_c
        )

    errors = [error(run(step)) for step in (2.0, 1.0, 0.5)]
    assert np.all((_slope(errors) > 1.7) & (_slope(errors) < 2.3)), errors


TYPICAL = {
    "contract-mat": slab(
        2.0, {"top": Face(insulation_r_m2k_w=0.5), "bottom": Face(adiabatic=True)}, duration_h=168.0
    ),
    "mat-on-ground-cold-nights": slab(
        1.5,
        {"top": Face(insulation_r_m2k_w=0.35, insulation_removal_h=96.0)},
        concrete=concrete(constant=False),
        ambient=Ambient(daily_min_c=2.0, daily_max_c=16.0, wind_m_s=4.0, solar_peak_w_m2=600.0),
        ground=Ground(depth_m=3.0, deep_temperature_c=10.0),
        placement_c=15.0,
        duration_h=168.0,
    ),
    "wall-forms-stripped": Scenario(
        element=Element("section", 4.0, width_m=0.8),
        concrete=concrete(constant=False),
        ambient=Ambient(daily_min_c=8.0, daily_max_c=24.0, wind_m_s=2.0),
        faces={
            "top": Face(insulation_r_m2k_w=0.2),
            "left": Face(formwork_r_m2k_w=0.15, formwork_removal_h=48.0),
            "right": Face(formwork_r_m2k_w=0.15, formwork_removal_h=48.0),
            "bottom": Face(adiabatic=True),
        },
        placement_c=22.0,
        duration_h=96.0,
    ),
}


@pytest.mark.parametrize("name", TYPICAL)
def test_default_resolution_is_within_a_tenth_of_a_degree(name):
    """Default grid and steps against the same scenario refined threefold (1D) or twofold (2D):
    peak, maximum differential and the near-surface series agree within 0.1 C."""
    scenario = TYPICAL[name]
    factor = 3.0 if scenario.element.shape == "slab" else 2.0
    default = forecast(scenario)
    fine = forecast(Scenario(**{**scenario.__dict__, "resolution": Resolution().refined(factor)}))
    assert default.summary.peak_temperature_c == pytest.approx(
        fine.summary.peak_temperature_c, abs=0.1
    )
    assert default.summary.max_differential_c == pytest.approx(
        fine.summary.max_differential_c, abs=0.1
    )
    assert np.max(np.abs(default.surface_c - fine.surface_c)) < 0.1
    assert np.max(np.abs(default.core_c - fine.core_c)) < 0.1
