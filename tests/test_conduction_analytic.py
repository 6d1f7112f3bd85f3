"""Pure conduction (no hydration heat) against closed-form series solutions.

Source of every reference: Carslaw, H. S. and Jaeger, J. C., "Conduction of Heat in Solids",
2nd ed., Oxford, 1959: section 3.3 (slab with faces held at a fixed temperature), section 3.11
(slab with a convective face, eigenvalues of lambda tan(lambda) = Bi) and the product solutions
of sections 1.15 and 6.3 for rectangles and boxes; implemented independently in
tests/reference/analytic.py.
"""

import numpy as np
import pytest

from model.ambient import Ambient
from model.scenario import Element, Face, Ground, Resolution, Scenario, Sensor
from model.solver import forecast
from tests.reference import analytic
from tests.scenarios import CONDUCTIVITY, DIFFUSIVITY, NO_HEAT, concrete, depth_sensors, slab

HOURS = np.array([24.0, 72.0])
"""Times checked [h]. These cases start with a sudden 25-30 C step between concrete and air, a
harsher start than a real pour; in the first hours after it the default grid is within 0.07 C
and converges at second order (see test_convergence_order.py)."""
FIXED = Face(film_coefficient_w_m2k=1e8)  # a film this stiff holds the face at air temperature


def _at(result, hours):
    idx = np.searchsorted(result.time_h, hours)
    return {sid: values[idx] for sid, values in result.sensors_c.items()}


def test_slab_with_fixed_faces_matches_fourier_series():
    """1 m slab, 40 C, both faces held at 10 C: within 0.05 C (C&J 3.3).

    A face held at a fixed temperature 30 C below the concrete is the harshest start there is;
    the default grid is within 0.06 C here, so this check runs on a grid refined twofold.
    """
    depths = [0.05, 0.1, 0.25, 0.5, 0.8]
    result = forecast(
        slab(
            1.0,
            {"top": FIXED, "bottom": FIXED},
            concrete=concrete(NO_HEAT),
            ambient=Ambient(air_c=10.0),
            placement_c=40.0,
            duration_h=72.0,
            sensors=depth_sensors(depths),
            resolution=Resolution().refined(2.0),
        )
    )
    values = _at(result, HOURS)
    for i, depth in enumerate(depths):
        for j, hour in enumerate(HOURS):
            expected = analytic.slab_fixed_faces_c(
                depth, hour * 3600.0, 1.0, DIFFUSIVITY, 40.0, 10.0
            )
            assert values[f"d{i}"][j] == pytest.approx(float(expected), abs=0.05)


def test_slab_with_convective_top_matches_biot_series():
    """2 m slab, adiabatic bottom, top film 10 W/m2K to 5 C air: within 0.05 C (C&J 3.11).

    The adiabatic bottom is the mid-plane of a 4 m wall cooled on both faces.
    """
    depths = [0.0, 0.05, 0.3, 1.0, 2.0]
    result = forecast(
        slab(
            2.0,
            {"top": Face(film_coefficient_w_m2k=10.0), "bottom": Face(adiabatic=True)},
            concrete=concrete(NO_HEAT),
            ambient=Ambient(air_c=5.0),
            placement_c=35.0,
            duration_h=72.0,
            sensors=depth_sensors(depths),
        )
    )
    values = _at(result, HOURS)
    for i, depth in enumerate(depths):
        for j, hour in enumerate(HOURS):
            expected = analytic.slab_convective_faces_c(
                2.0 - depth, hour * 3600.0, 2.0, CONDUCTIVITY, DIFFUSIVITY, 10.0, 35.0, 5.0
            )
            assert values[f"d{i}"][j] == pytest.approx(float(expected), abs=0.05), (depth, hour)


def test_section_matches_product_of_slab_series():
    """2 m x 1.5 m section, every face film 8 W/m2K: within 0.1 C (C&J 1.15 product)."""
    film = Face(film_coefficient_w_m2k=8.0)
    points = [(0.0, 0.75), (0.9, 0.75), (0.5, 0.05), (0.95, 1.45), (-0.6, 1.0)]
    sensors = tuple(Sensor(f"p{i}", d, x) for i, (x, d) in enumerate(points))
    scenario = Scenario(
        element=Element("section", 1.5, width_m=2.0),
        concrete=concrete(NO_HEAT),
        ambient=Ambient(air_c=10.0),
        faces={n: film for n in ("top", "bottom", "left", "right")},
        placement_c=30.0,
        duration_h=48.0,
        sensors=sensors,
    )
    values = _at(forecast(scenario), np.array([12.0, 48.0]))
    for i, (x, depth) in enumerate(points):
        for j, hour in enumerate((12.0, 48.0)):
            expected = analytic.box_convective_c(
                np.array([[x, 0.75 - depth]]),
                hour * 3600.0,
                (1.0, 0.75),
                CONDUCTIVITY,
                DIFFUSIVITY,
                8.0,
                30.0,
                10.0,
            )
            assert values[f"p{i}"][j] == pytest.approx(float(expected[0]), abs=0.1)


def test_block_matches_product_of_slab_series():
    """3 m x 2 m x 1.5 m block, every face film 8 W/m2K: within 0.1 C (C&J 6.3 product)."""
    film = Face(film_coefficient_w_m2k=8.0)
    points = [(0.0, 0.0, 0.75), (0.9, 0.4, 0.2), (0.95, 1.45, 0.05), (-0.3, -1.2, 1.0)]
    sensors = tuple(Sensor(f"p{i}", d, x, y) for i, (x, y, d) in enumerate(points))
    scenario = Scenario(
        element=Element("block", 1.5, width_m=2.0, length_m=3.0),
        concrete=concrete(NO_HEAT),
        ambient=Ambient(air_c=10.0),
        faces={n: film for n in ("top", "bottom", "left", "right", "front", "back")},
        placement_c=30.0,
        duration_h=24.0,
        sensors=sensors,
    )
    values = _at(forecast(scenario), np.array([24.0]))
    for i, (x, y, depth) in enumerate(points):
        expected = analytic.box_convective_c(
            np.array([[x, y, 0.75 - depth]]),
            24.0 * 3600.0,
            (1.0, 1.5, 0.75),
            CONDUCTIVITY,
            DIFFUSIVITY,
            8.0,
            30.0,
            10.0,
        )
        assert values[f"p{i}"][0] == pytest.approx(float(expected[0]), abs=0.1)


def test_slab_on_ground_of_same_material_is_a_thicker_slab():
    """A 1 m slab on 1 m of 'ground' with the concrete's own properties, its far boundary at the
    fixed deep temperature, is a 2 m slab with both outer faces held at 10 C (C&J 3.3)."""
    ground = Ground(
        depth_m=1.0,
        conductivity_w_mk=CONDUCTIVITY,
        density_kg_m3=2400.0,
        specific_heat_j_kgk=1000.0,
        deep_temperature_c=10.0,
        initial_temperature_c=40.0,
    )
    depths = [0.1, 0.5, 0.95]
    result = forecast(
        slab(
            1.0,
            {"top": FIXED},
            concrete=concrete(NO_HEAT),
            ambient=Ambient(air_c=10.0),
            placement_c=40.0,
            duration_h=48.0,
            ground=ground,
            sensors=depth_sensors(depths),
        )
    )
    values = _at(result, np.array([24.0, 48.0]))
    for i, depth in enumerate(depths):
        for j, hour in enumerate((24.0, 48.0)):
            expected = analytic.slab_fixed_faces_c(
                depth, hour * 3600.0, 2.0, DIFFUSIVITY, 40.0, 10.0
            )
            assert values[f"d{i}"][j] == pytest.approx(float(expected), abs=0.05)
