"""Small physical laws against hand calculations and published forms.

Each expected number is worked by hand in the comment beside it from the formula as published
(the formulas themselves are quoted from memory where so marked in the model's docstrings).
"""

import math

import numpy as np
import pytest

from model.ambient import Ambient, daily_cycle_c, hourly_series
from model.boundaries import (
    convection_coefficient_w_m2k,
    radiation_coefficient_w_m2k,
    sol_air_temperature_c,
    surface_conductance_w_m2k,
)
from model.cements import CementComposition, cement_preset
from model.hydration import (
    Binder,
    adiabatic_rise_c,
    cement_heat_j_kg,
    degree_of_hydration,
    estimate_hydration,
    hydration_slope_per_h,
)
from model.maturity import arrhenius_factor, equivalent_age_h, nurse_saul_factor_ch
from model.properties import MixMasses, conductivity_w_mk, specific_heat_j_kgk

WORKED_CEMENT = CementComposition(55.0, 18.0, 10.0, 7.0, 3.0, 1.0, 2.0, 370.0)


def test_degree_of_hydration_at_tau_is_alpha_u_over_e():
    # alpha(tau) = alpha_u exp(-1) (Schindler & Folliard 2005, eq. 1)
    assert degree_of_hydration(13.0, 13.0, 0.9, 0.75) == pytest.approx(0.75 / math.e, rel=1e-12)
    assert degree_of_hydration(0.0, 13.0, 0.9, 0.75) == 0.0
    assert degree_of_hydration(1e9, 13.0, 0.9, 0.75) == pytest.approx(0.75, rel=1e-6)


def test_hydration_slope_is_the_derivative():
    te = np.array([2.0, 10.0, 40.0, 300.0])
    step = 1e-5
    numeric = (
        degree_of_hydration(te + step, 13.0, 0.9, 0.75)
        - degree_of_hydration(te - step, 13.0, 0.9, 0.75)
    ) / (2 * step)
    assert hydration_slope_per_h(te, 13.0, 0.9, 0.75) == pytest.approx(numeric, rel=1e-6)


def test_cement_heat_worked_example():
    # Hcem = 500(.55) + 260(.18) + 866(.10) + 420(.07) + 624(.03) + 1186(.01) + 850(.02)
    #      = 275 + 46.8 + 86.6 + 29.4 + 18.72 + 11.86 + 17 = 485.38 J/g (S&F 2005, eq. 3)
    assert cement_heat_j_kg(WORKED_CEMENT) == pytest.approx(485380.0, rel=1e-9)


def test_hydration_estimate_worked_example():
    """Hand calculation of the Schindler & Folliard (2005) regressions (formulas from memory)
    for a Type I cement, C3A 10 %, C4AF 7 %, SO3 3 %, C3S 55 %, Blaine 370 m2/kg, w/cm 0.45:
    tau = 66.78 (1.4256)(2.905)(0.008602)(14.27) = 34.0 h; beta = 0.676;
    Ea = 22100 (0.501)(0.514)(7.91) = 45.1 kJ/mol; alpha_u = 1.031(0.45)/(0.644) = 0.720."""
    est = estimate_hydration(Binder(400.0, 0.0, 0.0, 180.0, WORKED_CEMENT))
    assert est.tau_h == pytest.approx(34.0, abs=0.1)
    assert est.beta == pytest.approx(0.676, abs=0.002)
    assert est.activation_energy_j_mol == pytest.approx(45100.0, rel=0.003)
    assert est.alpha_u == pytest.approx(0.720, abs=0.001)
    assert est.total_heat_j_kg == pytest.approx(485380.0, rel=1e-9)


def test_supplementary_materials_change_the_estimate_the_published_way():
    """Fly ash and slag: less heat per kg (class F ash), slower (tau up), higher alpha_u
    (S&F 2005 eqs. 4-7: signs of the p_FA and p_SLAG terms)."""
    plain = estimate_hydration(Binder(400.0, 0.0, 0.0, 180.0, WORKED_CEMENT))
    ash = estimate_hydration(Binder(300.0, 100.0, 0.0, 180.0, WORKED_CEMENT, 0.10))
    slag = estimate_hydration(Binder(200.0, 0.0, 200.0, 180.0, WORKED_CEMENT))
    assert ash.total_heat_j_kg < plain.total_heat_j_kg
    # Hu = 485.38(0.75) + 1800(0.10)(0.25) = 364.04 + 45 = 409.04 J/g
    assert ash.total_heat_j_kg == pytest.approx(409035.0, rel=1e-6)
    assert ash.tau_h > plain.tau_h and slag.tau_h > plain.tau_h
    assert ash.alpha_u == pytest.approx(0.720 + 0.5 * 0.25, abs=0.001)
    assert slag.alpha_u == pytest.approx(min(1.0, 0.720 + 0.3 * 0.5), abs=0.001)


def test_adiabatic_rise_rule_of_thumb():
    """About 12-15 C of adiabatic rise per 100 kg/m3 of portland cement (common practice, no
    source); the Type I preset at w/cm 0.45 with 2400 kg/m3 and 1000 J/(kg K) lands in it."""
    est = estimate_hydration(Binder(300.0, 0.0, 0.0, 135.0, cement_preset("type_i")))
    per_100 = adiabatic_rise_c(100.0, est.total_heat_j_kg, est.alpha_u, 2400.0, 1000.0)
    assert 12.0 <= per_100 <= 15.5


def test_cement_preset_lookup_names_valid_choices():
    assert cement_preset("Type I") == cement_preset("type_i")
    with pytest.raises(ValueError, match="type_ii"):
        cement_preset("type_ix")


def test_equivalent_age_at_constant_temperature():
    # At 21.1 C equivalent age equals real age; at 40 C with Ea = 41 kJ/mol:
    # exp(41000/8.314 (1/294.25 - 1/313.15)) = exp(4931.44 x 2.0511e-4) = exp(1.01149) = 2.7497
    time = np.linspace(0.0, 10.0, 11)
    assert equivalent_age_h(time, np.full(11, 21.1), 41000.0)[-1] == pytest.approx(10.0)
    assert equivalent_age_h(time, np.full(11, 40.0), 41000.0)[-1] == pytest.approx(27.497, rel=1e-4)
    assert arrhenius_factor(21.1, 41000.0) == pytest.approx(1.0)


def test_nurse_saul_factor_at_constant_temperature():
    # ASTM C1074: M = (T - T0) t = (40 - 0) 10 = 400 C h; nothing counts below the datum.
    time = np.linspace(0.0, 10.0, 6)
    assert nurse_saul_factor_ch(time, np.full(6, 40.0), 0.0)[-1] == pytest.approx(400.0)
    assert nurse_saul_factor_ch(time, np.full(6, -5.0), 0.0)[-1] == 0.0


def test_conductivity_falls_with_hydration():
    # k = k_uc (1.33 - 0.33 alpha) (Schindler 2002): 1.33 k_uc fresh, k_uc fully hydrated
    assert conductivity_w_mk(np.array([0.0, 1.0]), 2.0) == pytest.approx([2.66, 2.0])


def test_van_breugel_specific_heat_hand_calculation():
    masses = MixMasses(380.0, 1860.0, 160.0)
    # fresh: (433200 + 1488000 + 669920) / 2400 = 2591120 / 2400 = 1079.63 J/(kg K)
    assert specific_heat_j_kgk(0.0, 20.0, masses) == pytest.approx(1079.633, rel=1e-6)
    # alpha 0.75 at 40 C: c_cef = 8.4 x 40 + 339 = 675;
    # (192375 + 108300 + 1488000 + 669920) / 2400 = 2458595 / 2400 = 1024.41
    assert specific_heat_j_kgk(0.75, 40.0, masses) == pytest.approx(1024.415, rel=1e-5)


def test_surface_coefficients_hand_calculation():
    # Watmuff et al. (1977): 2.8 + 3.0 V; at 2 m/s 8.8 W/(m2 K)
    assert convection_coefficient_w_m2k(2.0) == pytest.approx(8.8)
    # 4 x 0.9 x 5.670374e-8 x 293.15^3 = 2.04133e-7 x 2.51924e7 = 5.1426 W/(m2 K)
    assert radiation_coefficient_w_m2k(20.0, 0.9) == pytest.approx(5.1426, rel=1e-4)
    # R 0.5 in series with a 10 W/(m2 K) film: 1 / (0.5 + 0.1) = 1.6667
    assert surface_conductance_w_m2k(10.0, 0.5) == pytest.approx(1 / 0.6)
    # 0.6 x 800 W/m2 absorbed on a 16 W/(m2 K) film raises the air 30 C by 30 C
    assert sol_air_temperature_c(30.0, 0.6 * 800.0, 16.0) == pytest.approx(60.0)


def test_daily_cycle_hits_min_and_max_at_the_stated_hours():
    # placed at 08:00: 15:00 is 7 h later (max), 03:00 the next day 19 h later (min)
    temps = daily_cycle_c(np.array([7.0, 19.0, 31.0]), 5.0, 21.0, 8.0)
    assert temps == pytest.approx([21.0, 5.0, 21.0])


def test_hourly_series_interpolates_and_holds():
    assert hourly_series([0.5, 1.0, 5.0], [10.0, 20.0, 30.0]) == pytest.approx([15.0, 20.0, 30.0])
    amb = Ambient(air_c=(10.0, 20.0), wind_m_s=3.0, solar_peak_w_m2=800.0, placement_clock_h=6.0)
    assert amb.air_temperature_c(0.5) == pytest.approx(15.0)
    assert amb.irradiance_w_m2(6.0) == pytest.approx(800.0)  # noon
    assert amb.irradiance_w_m2(14.0) == 0.0  # 20:00
