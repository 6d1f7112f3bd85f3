"""Hydrating concrete against independent references of the same physics.

References:
- adiabatic: the Schindler & Folliard (2005) hydration ODE with Arrhenius equivalent age
  (Freiesleben Hansen & Pedersen 1977, ASTM C1074), integrated by scipy.integrate.solve_ivp
  (Radau, rtol 1e-10) in tests/reference/mol.py;
- slabs: a method-of-lines solve (200 uniform cells, scipy.integrate.solve_ivp BDF with an
  analytic sparse Jacobian, rtol 1e-8) in tests/reference/mol.py, written apart from model/.
"""

import numpy as np
import pytest

from model.ambient import Ambient
from model.scenario import Element, Face, Ground, Scenario
from model.solver import forecast
from tests.reference import mol
from tests.scenarios import CONTRACT_HYDRATION, DENSITY, SPECIFIC_HEAT, concrete, slab

H = CONTRACT_HYDRATION
ADIABATIC = Face(adiabatic=True)


def test_adiabatic_slab_follows_the_hydration_ode():
    """Both faces adiabatic: uniform temperature equal to the ODE within 0.05 C at every hour."""
    result = forecast(
        slab(2.0, {"top": ADIABATIC, "bottom": ADIABATIC}, placement_c=18.0, duration_h=336.0)
    )
    expected = mol.adiabatic_temperature(
        18.0,
        380.0,
        H.total_heat_j_kg,
        H.tau_h,
        H.beta,
        H.alpha_u,
        H.activation_energy_j_mol,
        DENSITY,
        SPECIFIC_HEAT,
        result.time_h,
    )
    assert np.max(np.abs(result.core_c - expected)) < 0.05
    assert np.max(result.spread_c) < 1e-6  # nothing drives a gradient


SLABS = {
    # name: (thickness m, top film W/m2K, top R m2K/W, bottom U W/m2K or None, air C, placement C)
    "contract-mat": (2.0, 12.0, 0.5, None, 20.0, 20.0),
    "thin-both-faces": (1.2, 10.0, 0.0, 10.0, 10.0, 25.0),
    "thick-cold-bare": (3.0, 15.0, 0.0, 2.0, 5.0, 15.0),
    "warm-placement-blanket": (2.5, 8.0, 1.0, None, 30.0, 32.0),
}


@pytest.mark.parametrize("name", SLABS)
def test_slab_matches_method_of_lines(name):
    """Peak and maximum differential within 0.2 C, peak time within 3 h."""
    thickness, film, r_top, u_bottom, air, placement = SLABS[name]
    faces = {"top": Face(film_coefficient_w_m2k=film, insulation_r_m2k_w=r_top)}
    faces["bottom"] = ADIABATIC if u_bottom is None else Face(film_coefficient_w_m2k=u_bottom)
    result = forecast(
        slab(thickness, faces, ambient=Ambient(air_c=air), placement_c=placement, duration_h=168.0)
    )
    reference = mol.hydrating_slab(
        thickness,
        200,
        placement,
        air,
        1.0 / (r_top + 1.0 / film),
        u_bottom,
        380.0,
        H.total_heat_j_kg,
        H.tau_h,
        H.beta,
        H.alpha_u,
        H.activation_energy_j_mol,
        DENSITY,
        SPECIFIC_HEAT,
        2.5,
        168.0,
        np.arange(0.0, 168.001, 0.25),
    )
    expected = mol.summary(reference, 0.05, bottom_exposed=u_bottom is not None)
    s = result.summary
    assert s.peak_temperature_c == pytest.approx(expected["peak_c"], abs=0.2)
    assert s.peak_time_h == pytest.approx(expected["peak_time_h"], abs=3.0)
    assert s.max_differential_c == pytest.approx(expected["max_differential_c"], abs=0.2)


def _energy_cases():
    variable = concrete(constant=False)
    yield (
        "slab-variable-properties",
        slab(
            1.5,
            {"top": Face(insulation_r_m2k_w=0.3), "bottom": Face()},
            concrete=variable,
            ambient=Ambient(daily_min_c=5.0, daily_max_c=18.0, wind_m_s=3.0, solar_peak_w_m2=700.0),
            duration_h=120.0,
        ),
    )
    yield (
        "section-on-ground",
        Scenario(
            element=Element("section", 2.0, width_m=3.0),
            concrete=variable,
            ambient=Ambient(air_c=12.0),
            faces={
                "top": Face(insulation_r_m2k_w=0.5, insulation_removal_h=60.0),
                "left": Face(formwork_r_m2k_w=0.15, formwork_removal_h=36.0),
                "right": Face(formwork_r_m2k_w=0.15, formwork_removal_h=36.0),
            },
            ground=Ground(depth_m=2.0, deep_temperature_c=12.0),
            duration_h=96.0,
        ),
    )


@pytest.mark.parametrize(("name", "scenario"), list(_energy_cases()))
def test_energy_is_conserved(name, scenario):
    """Heat generated = heat stored + heat lost through the faces, within 0.5 %."""
    energy = forecast(scenario).energy
    assert energy.generated_j > 0
    assert abs(energy.relative_imbalance) < 0.005, energy
