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
    """Hand calculation of the Schindler & Folliard (2005) regressions (sources: see the note
    above test_tau_regression_matches_the_published_quotation) for a Type I cement, C3A 10 %,
    C4AF 7 %, SO3 3 %, C3S 55 %, Blaine 370 m2/kg, w/cm 0.45:
    tau = 66.78 (1.4256)(1.2709)(0.0086132)(14.267) = 14.87 h; beta = 0.676;
    Ea = 22100 (0.501)(0.514)(7.92) = 45.1 kJ/mol; alpha_u = 1.031(0.45)/(0.644) = 0.720."""
    est = estimate_hydration(Binder(400.0, 0.0, 0.0, 180.0, WORKED_CEMENT))
    assert est.tau_h == pytest.approx(14.87, abs=0.01)
    assert est.beta == pytest.approx(0.676, abs=0.002)
    assert est.activation_energy_j_mol == pytest.approx(45100.0, rel=0.003)
    assert est.alpha_u == pytest.approx(0.720, abs=0.001)
    assert est.total_heat_j_kg == pytest.approx(485380.0, rel=1e-9)


# Source of the tau regression. The paper itself (Schindler & Folliard 2005, ACI Materials
# Journal 102(1), 24-33) could not be opened with the search tool: its pages corpus returns only
# page openings, and the 2002 dissertation and the 2004 ACI paper on activation energy appear
# there only as title pages. Searched: pages/docs/code/issues for "Schindler Folliard 2005 tau
# regression pC3S pC3A Blaine SO3", "66.78 ... -0.401", "hydration time parameter ... exp(2.187
# pSLAG + 9.5 pFA pFA-CaO)", "22100 C3A^0.30 C4AF^0.25 Blaine^0.35" and exact strings. The one
# quotation found is secondary (public formula notes that turned up in the code search, quoting
# Schindler & Folliard 2005; not a primary source, so the confirmation is only as good as that
# transcription), which gives
#     tau = 66.78 pC3A^-0.154 pC3S^-0.401 Blaine^-0.804 pSO3^-0.758
#           exp(2.187 p_slag + 9.50 p_FA p_FA-CaO)      [h, mass fractions, Blaine in m2/kg]
# with the worked value "Type I/II (pC3A 0.08, pC3S 0.55, Blaine 380, pSO3 0.03) -> tau = 15.1 h";
# so pC3S, not pC4AF, as issue 12 recalled. The same notes quote Hcem = 500 pC3S + 260 pC2S +
# 866 pC3A + 420 pC4AF + 624 pSO3 + 1186 pFreeCaO + 850 pMgO, Hu = Hcem p_cem + 461 p_slag +
# 1800 p_FA-CaO p_FA and alpha_u = 1.031 w/cm / (0.194 + w/cm) + 0.50 p_FA + 0.30 p_slag (the
# model's forms). For beta they print the SO3 exponent as -0.558 but note that it gives
# beta = 32 for the cement above, impossible, and that +0.558 gives about 0.65: the model's
# +0.558 (checked below). They give the alpha_u cap as 1.09; the model caps alpha_u at 1 (a
# degree of hydration cannot exceed 1; a cap of 1 in the paper is from memory). The Ea
# regression and its fly-ash/slag factor were not found: from memory (Schindler 2004, ACI
# Materials Journal 101(1)).
def test_tau_regression_matches_the_published_quotation():
    cement = CementComposition(55.0, 20.0, 8.0, 9.0, 3.0, 1.0, 2.0, 380.0)
    est = estimate_hydration(Binder(350.0, 0.0, 0.0, 157.5, cement))
    # 66.78 x 0.08^-0.154 x 0.55^-0.401 x 380^-0.804 x 0.03^-0.758
    # = 66.78 x 1.4755 x 1.2709 x 0.0084297 x 14.267 = 15.06 h ("15.1 h" in the quotation)
    assert est.tau_h == pytest.approx(15.1, abs=0.05)
    # 181.4 x 0.08^0.146 x 0.55^0.227 x 380^-0.535 x 0.03^+0.558 = 0.645 ("about 0.65")
    assert est.beta == pytest.approx(0.65, abs=0.01)


W_CM = 0.45
ALPHA_U_AT_W_CM = 1.031 * 0.45 / (0.194 + 0.45)  # = 0.46395 / 0.644 = 0.72042

# The arithmetic of each regression with each preset's numbers written out (mass fractions;
# Blaine in m2/kg), to be compared with estimate_hydration; w/cm 0.45, no SCMs.
PRESET_ARITHMETIC = {
    "type_i": {  # C3S 55, C2S 18, C3A 10, C4AF 8, SO3 3.3, free CaO 1.0, MgO 2.4 %, 370 m2/kg
        "hu": 1000
        * (
            500 * 0.55
            + 260 * 0.18
            + 866 * 0.10
            + 420 * 0.08
            + 624 * 0.033
            + 1186 * 0.010
            + 850 * 0.024
        ),
        "tau": 66.78 * 0.10**-0.154 * 0.55**-0.401 * 370**-0.804 * 0.033**-0.758,
        "beta": 181.4 * 0.10**0.146 * 0.55**0.227 * 370**-0.535 * 0.033**0.558,
        "ea": 22100 * 0.10**0.30 * 0.08**0.25 * 370**0.35,
    },
    "type_ii": {  # C3S 55, C2S 19, C3A 6, C4AF 11, SO3 2.8, free CaO 1.0, MgO 2.0 %, 380
        "hu": 1000
        * (
            500 * 0.55
            + 260 * 0.19
            + 866 * 0.06
            + 420 * 0.11
            + 624 * 0.028
            + 1186 * 0.010
            + 850 * 0.020
        ),
        "tau": 66.78 * 0.06**-0.154 * 0.55**-0.401 * 380**-0.804 * 0.028**-0.758,
        "beta": 181.4 * 0.06**0.146 * 0.55**0.227 * 380**-0.535 * 0.028**0.558,
        "ea": 22100 * 0.06**0.30 * 0.11**0.25 * 380**0.35,
    },
    "type_iii": {  # C3S 56, C2S 15, C3A 9, C4AF 8, SO3 3.5, free CaO 1.5, MgO 2.2 %, 550
        "hu": 1000
        * (
            500 * 0.56
            + 260 * 0.15
            + 866 * 0.09
            + 420 * 0.08
            + 624 * 0.035
            + 1186 * 0.015
            + 850 * 0.022
        ),
        "tau": 66.78 * 0.09**-0.154 * 0.56**-0.401 * 550**-0.804 * 0.035**-0.758,
        "beta": 181.4 * 0.09**0.146 * 0.56**0.227 * 550**-0.535 * 0.035**0.558,
        "ea": 22100 * 0.09**0.30 * 0.08**0.25 * 550**0.35,
    },
    "type_iv": {  # C3S 34, C2S 41, C3A 4, C4AF 15, SO3 1.9, free CaO 0.5, MgO 1.8 %, 340
        "hu": 1000
        * (
            500 * 0.34
            + 260 * 0.41
            + 866 * 0.04
            + 420 * 0.15
            + 624 * 0.019
            + 1186 * 0.005
            + 850 * 0.018
        ),
        "tau": 66.78 * 0.04**-0.154 * 0.34**-0.401 * 340**-0.804 * 0.019**-0.758,
        "beta": 181.4 * 0.04**0.146 * 0.34**0.227 * 340**-0.535 * 0.019**0.558,
        "ea": 22100 * 0.04**0.30 * 0.15**0.25 * 340**0.35,
    },
    "type_v": {  # C3S 54, C2S 22, C3A 4, C4AF 13, SO3 2.3, free CaO 0.5, MgO 1.9 %, 380
        "hu": 1000
        * (
            500 * 0.54
            + 260 * 0.22
            + 866 * 0.04
            + 420 * 0.13
            + 624 * 0.023
            + 1186 * 0.005
            + 850 * 0.019
        ),
        "tau": 66.78 * 0.04**-0.154 * 0.54**-0.401 * 380**-0.804 * 0.023**-0.758,
        "beta": 181.4 * 0.04**0.146 * 0.54**0.227 * 380**-0.535 * 0.023**0.558,
        "ea": 22100 * 0.04**0.30 * 0.13**0.25 * 380**0.35,
    },
}

# Ranges typical of plain ASTM C150 cements at w/cm 0.45 (from memory: Hu of portland cements
# 400-520 J/g, low-heat Type IV at the bottom; tau of a few hours to about a day and a half;
# beta about 0.4-1.2; apparent activation energy 35-55 kJ/mol, ASTM C1074 quoting 40-45 kJ/mol
# for Type I). A check that nothing is off by a factor, not a calibration.
TYPICAL_RANGES = {
    "total_heat_j_kg": (400e3, 520e3),
    "tau_h": (8.0, 35.0),
    "beta": (0.4, 1.2),
    "alpha_u": (0.65, 0.80),
    "activation_energy_j_mol": (35e3, 55e3),
}


@pytest.mark.parametrize("name", sorted(PRESET_ARITHMETIC))
def test_each_preset_estimate_against_written_out_arithmetic(name):
    est = estimate_hydration(Binder(350.0, 0.0, 0.0, 350.0 * W_CM, cement_preset(name)))
    expected = PRESET_ARITHMETIC[name]
    assert est.total_heat_j_kg == pytest.approx(expected["hu"], rel=1e-9)
    assert est.tau_h == pytest.approx(expected["tau"], rel=1e-9)
    assert est.beta == pytest.approx(expected["beta"], rel=1e-9)
    assert est.alpha_u == pytest.approx(ALPHA_U_AT_W_CM, rel=1e-9)
    assert est.activation_energy_j_mol == pytest.approx(expected["ea"], rel=1e-9)
    for field, (low, high) in TYPICAL_RANGES.items():
        assert low <= getattr(est, field) <= high, field


def test_type_i_tau_by_hand():
    # 66.78 x 0.10^-0.154 x 0.55^-0.401 x 370^-0.804 x 0.033^-0.758
    # = 66.78 x 1.4256 x 1.2709 x 0.0086132 x 13.273 = 13.83 h (issue 12: "about 13.8 h"; the
    # C4AF form gave 30.0 h)
    est = estimate_hydration(Binder(350.0, 0.0, 0.0, 157.5, cement_preset("type_i")))
    assert est.tau_h == pytest.approx(13.83, abs=0.01)


def test_presets_rank_as_their_types_intend():
    """ASTM C150's purposes (high early strength III, moderate heat II, low heat IV, sulfate
    resisting V): III hydrates fastest, IV slowest and with the least heat, II less heat than
    I."""
    est = {
        name: estimate_hydration(Binder(350.0, 0.0, 0.0, 157.5, cement_preset(name)))
        for name in PRESET_ARITHMETIC
    }
    taus = {name: e.tau_h for name, e in est.items()}
    assert min(taus, key=taus.get) == "type_iii"
    assert max(taus, key=taus.get) == "type_iv"
    heats = {name: e.total_heat_j_kg for name, e in est.items()}
    assert min(heats, key=heats.get) == "type_iv"
    assert heats["type_ii"] < heats["type_i"]


# Compound and oxide limits of ASTM C150 (from memory): Type II C3A <= 8 %, SO3 <= 3.0 %;
# Type III C3A <= 15 %, SO3 <= 3.5 % (C3A <= 8 %) or 4.5 %; Type IV C3S <= 35 %, C2S >= 40 %,
# C3A <= 7 %, SO3 <= 2.3 %; Type V C3A <= 5 %, C4AF + 2 C3A <= 25 %, SO3 <= 2.3 %; Type I SO3
# <= 3.0 % (C3A <= 8 %) or 3.5 %; MgO <= 6.0 % and Blaine >= 260 m2/kg for all.
def _c150_so3_limit_pct(name: str, c3a_pct: float) -> float:
    if name in ("type_iv", "type_v"):
        return 2.3
    if name == "type_iii":
        return 3.5 if c3a_pct <= 8.0 else 4.5
    return 3.0 if c3a_pct <= 8.0 else 3.5


def test_presets_are_plausible_cements():
    for name in PRESET_ARITHMETIC:
        c = cement_preset(name)
        total = sum(c.fractions().values())
        # Bogue compounds + SO3 + free lime + MgO: most of the cement, the rest alkalis,
        # loss on ignition and insoluble residue (common practice, no source)
        assert 0.93 <= total <= 1.0, name
        assert c.mgo_pct <= 6.0 and c.blaine_m2_kg >= 260.0, name
        assert c.so3_pct <= _c150_so3_limit_pct(name, c.c3a_pct), name
    assert cement_preset("type_ii").c3a_pct <= 8.0
    assert cement_preset("type_iii").c3a_pct <= 15.0
    iv = cement_preset("type_iv")
    assert iv.c3s_pct <= 35.0 and iv.c2s_pct >= 40.0 and iv.c3a_pct <= 7.0
    v = cement_preset("type_v")
    assert v.c3a_pct <= 5.0 and v.c4af_pct + 2 * v.c3a_pct <= 25.0
    # Type III is ground finer than the others (PCA EB001, from memory: about 550 m2/kg)
    others = [cement_preset(n).blaine_m2_kg for n in PRESET_ARITHMETIC if n != "type_iii"]
    assert cement_preset("type_iii").blaine_m2_kg > max(others) + 100.0


# A mill certificate of our own invention (Type I/II): C3S 58.2, C2S 14.1, C3A 7.3, C4AF 9.8,
# SO3 3.1, free CaO 1.2, MgO 2.6 %, Blaine 392 m2/kg.
MILL_CERTIFICATE = CementComposition(58.2, 14.1, 7.3, 9.8, 3.1, 1.2, 2.6, 392.0)
MILL_HCEM_J_KG = 1000 * (
    500 * 0.582 + 260 * 0.141 + 866 * 0.073 + 420 * 0.098 + 624 * 0.031 + 1186 * 0.012 + 850 * 0.026
)  # = 1000 x (291 + 36.66 + 63.218 + 41.16 + 19.344 + 14.232 + 22.1) = 487714 J/kg
MILL_TAU_H = 66.78 * 0.073**-0.154 * 0.582**-0.401 * 392**-0.804 * 0.031**-0.758
MILL_BETA = 181.4 * 0.073**0.146 * 0.582**0.227 * 392**-0.535 * 0.031**0.558
MILL_EA_J_MOL = 22100 * 0.073**0.30 * 0.098**0.25 * 392**0.35


def test_mill_certificate_plain_fly_ash_and_slag_against_written_out_arithmetic():
    plain = estimate_hydration(Binder(350.0, 0.0, 0.0, 157.5, MILL_CERTIFICATE))
    assert plain.total_heat_j_kg == pytest.approx(487714.0, rel=1e-9)
    assert plain.total_heat_j_kg == pytest.approx(MILL_HCEM_J_KG, rel=1e-9)
    assert plain.tau_h == pytest.approx(MILL_TAU_H, rel=1e-9)
    assert plain.beta == pytest.approx(MILL_BETA, rel=1e-9)
    assert plain.alpha_u == pytest.approx(ALPHA_U_AT_W_CM, rel=1e-9)
    assert plain.activation_energy_j_mol == pytest.approx(MILL_EA_J_MOL, rel=1e-9)
    for field, (low, high) in TYPICAL_RANGES.items():
        assert low <= getattr(plain, field) <= high, field

    # Class C fly ash (CaO 25 %) as 100 of 350 kg/m3: p_FA = 0.285714
    p_fa = 100.0 / 350.0
    ash = estimate_hydration(Binder(250.0, 100.0, 0.0, 157.5, MILL_CERTIFICATE, 0.25))
    assert ash.total_heat_j_kg == pytest.approx(
        MILL_HCEM_J_KG * (250.0 / 350.0) + 1000 * 1800 * 0.25 * p_fa, rel=1e-9
    )
    assert ash.tau_h == pytest.approx(MILL_TAU_H * math.exp(9.5 * p_fa * 0.25), rel=1e-9)
    assert ash.beta == pytest.approx(MILL_BETA, rel=1e-9)
    assert ash.alpha_u == pytest.approx(ALPHA_U_AT_W_CM + 0.50 * p_fa, rel=1e-9)
    # f_E = 1 - 1.05 x 0.285714 x (1 - 0.25/0.40) = 1 - 0.3 x 0.375 = 0.8875
    assert ash.activation_energy_j_mol == pytest.approx(0.8875 * MILL_EA_J_MOL, rel=1e-9)

    # slag as half the binder: p_SLAG = 0.5
    slag = estimate_hydration(Binder(175.0, 0.0, 175.0, 157.5, MILL_CERTIFICATE))
    assert slag.total_heat_j_kg == pytest.approx(0.5 * MILL_HCEM_J_KG + 1000 * 461 * 0.5, rel=1e-9)
    assert slag.tau_h == pytest.approx(MILL_TAU_H * math.exp(2.187 * 0.5), rel=1e-9)
    assert slag.beta == pytest.approx(MILL_BETA * math.exp(-0.647 * 0.5), rel=1e-9)
    assert slag.alpha_u == pytest.approx(ALPHA_U_AT_W_CM + 0.30 * 0.5, rel=1e-9)
    # f_E = 1 + 0.40 x 0.5 = 1.2
    assert slag.activation_energy_j_mol == pytest.approx(1.2 * MILL_EA_J_MOL, rel=1e-9)


def test_more_alite_hydrates_sooner_and_more_ferrite_never_sooner():
    """C3S (alite) is the fast-reacting silicate, C4AF (ferrite) a slow one (PCA EB001, from
    memory): raising C3S must shorten tau; raising C4AF must not."""

    def tau(c3s_pct: float, c4af_pct: float) -> float:
        cement = CementComposition(c3s_pct, 73.0 - c3s_pct, 8.0, c4af_pct, 3.0, 1.0, 2.0, 380.0)
        return estimate_hydration(Binder(350.0, 0.0, 0.0, 157.5, cement)).tau_h

    by_c3s = [tau(c3s, 9.0) for c3s in (45.0, 50.0, 55.0, 60.0, 65.0)]
    assert all(np.diff(by_c3s) < 0.0)
    by_c4af = [tau(55.0, c4af) for c4af in (6.0, 9.0, 12.0, 15.0)]
    assert all(np.diff(by_c4af) >= 0.0)


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
