"""A hydrating footing section on the ground (2D, L-shaped solid, daily air cycle, wind) against
an independent method-of-lines solve of the same physics.

Reference: tests/reference/mol_section.py, uniform 0.05 m cells, scipy.integrate.solve_ivp BDF
with an analytic sparse Jacobian, rtol 1e-6, written apart from model/ (same equations:
Schindler & Folliard 2005 hydration, ASTM C1074 equivalent age, Watmuff et al. convection plus
linearised radiation, Patankar 1980 finite volumes). Its own grid error, against 0.025 m cells,
is 0.003 C on the peak and up to 0.04 C on the sensor series (measured when it was written); at
the top edge point (50 mm under the top, 50 mm inside the side) up to 0.06 C. Against the
Richardson extrapolation of the 0.05 and 0.025 m references the default grid is 0.044 C off at
that edge point, 0.023 C at the top sensor and 0.038 C at the side sensor (measured).
"""

from dataclasses import replace

import numpy as np
import pytest

from model.scenario import Sensor
from model.solver import forecast
from tests.reference import mol_section
from tests.scenarios import footing_on_ground

DURATION_H = 96.0
EDGE_XZ_M = (1.95, 2.95)
"""The top edge point of the section: 50 mm inside the side, 50 mm under the top [m]."""


@pytest.fixture(scope="module")
def both():
    scenario = footing_on_ground(DURATION_H)
    edge = Sensor("edge", 0.05, EDGE_XZ_M[0])
    ours = forecast(replace(scenario, sensors=(*scenario.sensors, edge)))
    ref = mol_section.footing_on_ground(
        0.05, 1e-6, duration_h=DURATION_H, points_xz_m={"edge": EDGE_XZ_M}
    )
    return ours, ref


def test_hourly_series_match_the_reference(both):
    """Hottest point and both sensors within 0.1 C at every hour of the first four days (the
    hydration peak and the first daily cycles)."""
    ours, ref = both
    np.testing.assert_allclose(ours.time_h, ref["time_h"])
    np.testing.assert_allclose(ours.core_c, ref["core_c"], atol=0.1)
    np.testing.assert_allclose(ours.sensors_c["top"], ref["top_c"], atol=0.1)
    np.testing.assert_allclose(ours.sensors_c["side"], ref["side_c"], atol=0.1)


def test_top_edge_point_matches_the_reference(both):
    """The section's top edge (two faces losing heat) within 0.1 C at every hour."""
    ours, ref = both
    np.testing.assert_allclose(ours.sensors_c["edge"], ref["points_c"]["edge"], atol=0.1)


def test_peak_and_differential_match_the_reference(both):
    ours, ref = both
    assert ours.summary.peak_temperature_c == pytest.approx(ref["peak_refined_c"], abs=0.05)
    assert ours.summary.peak_time_h == pytest.approx(ref["peak_refined_time_h"], abs=1.0)
    differential = float(np.max(ours.core_c - ours.sensors_c["side"]))
    assert differential == pytest.approx(ref["max_differential_c"], abs=0.1)
