"""Strength-maturity relations and the thermal cracking screening against hand calculations.

Each expected number is worked by hand in the comment beside it from the formula as published
(ASTM C1074 Appendix X1, ACI 318-19, ACI 207.2R; coefficients quoted from memory where so marked
in the model's docstrings). The fits are checked against synthetic lab data made with the model
itself plus seeded noise: a closed loop, whose tolerance is stated beside each check.
"""

import math

import numpy as np
import pytest

from model.cracking import (
    allowable_differential_c,
    cracking_index,
    elastic_modulus_mpa,
    external_restraint_stress_mpa,
    internal_restraint_stress_mpa,
    tensile_strength_mpa,
)
from model.maturity import arrhenius_factor, equivalent_age_h
from model.strength import (
    StrengthMaturity,
    exponential_strength_mpa,
    fit_strength_maturity,
    hyperbolic_strength_mpa,
    strength_form,
    time_to_strength_h,
)

ACTIVATION_J_MOL = 40_000.0
TEST_AGES_H = np.array([12.0, 24.0, 72.0, 168.0, 336.0, 672.0])
CURING_C = np.array([10.0, 21.1, 30.0])
REPLICATES = 3
NOISE_MPA = 0.3

EXPONENTIAL_TRUE = {"ultimate_mpa": 45.0, "tau_h": 40.0, "beta": 0.8}
HYPERBOLIC_TRUE = {"ultimate_mpa": 40.0, "rate_per_h": 0.01, "offset_h": 6.0}
TRUE_BY_FORM = {"exponential": EXPONENTIAL_TRUE, "hyperbolic": HYPERBOLIC_TRUE}


def lab_data(form, curing_c=CURING_C, noise_mpa=NOISE_MPA, seed=1074):
    """Cylinders tested at TEST_AGES_H, cured at each of ``curing_c``, REPLICATES each, with
    strengths from the true relation at their equivalent age plus Gaussian noise."""
    age, temperature = (a.ravel() for a in np.meshgrid(TEST_AGES_H, curing_c))
    age, temperature = np.repeat(age, REPLICATES), np.repeat(temperature, REPLICATES)
    te = arrhenius_factor(temperature, ACTIVATION_J_MOL) * age
    function, _ = strength_form(form)
    strength = function(te, **TRUE_BY_FORM[form])
    noise = np.random.default_rng(seed).normal(0.0, noise_mpa, strength.shape)
    return age, temperature, np.maximum(strength + noise, 0.0)


# ---------------------------------------------------------------- strength-maturity functions


def test_exponential_strength_at_tau_is_ultimate_over_e():
    # S(tau) = Su exp(-(tau/tau)**beta) = Su/e = 45/2.71828 = 16.555 MPa (ASTM C1074 X1 form)
    assert exponential_strength_mpa(40.0, 45.0, 40.0, 0.8) == pytest.approx(45.0 / math.e)
    assert exponential_strength_mpa(40.0, 45.0, 40.0, 0.8) == pytest.approx(16.555, abs=1e-3)
    # te = 0: exp(-inf) = 0; te -> inf: exp(0) = 1, S -> Su
    assert exponential_strength_mpa(0.0, 45.0, 40.0, 0.8) == 0.0
    assert exponential_strength_mpa(1e12, 45.0, 40.0, 0.8) == pytest.approx(45.0, rel=1e-6)
    # te = 2 tau, beta = 1: Su exp(-1/2) = 45 * 0.60653 = 27.294 MPa
    assert exponential_strength_mpa(80.0, 45.0, 40.0, 1.0) == pytest.approx(27.294, abs=1e-3)


def test_hyperbolic_strength_at_unit_rate_age_is_half_ultimate():
    # k (t - t0) = 0.01 (106 - 6) = 1: S = Su * 1/(1 + 1) = 40/2 = 20 MPa (ASTM C1074 X1 form)
    assert hyperbolic_strength_mpa(106.0, 40.0, 0.01, 6.0) == pytest.approx(20.0)
    # k (t - t0) = 3: S = 40 * 3/4 = 30 MPa
    assert hyperbolic_strength_mpa(306.0, 40.0, 0.01, 6.0) == pytest.approx(30.0)
    # t <= t0: no strength yet (the form is defined for t > t0 and 0 before)
    np.testing.assert_array_equal(hyperbolic_strength_mpa([0.0, 3.0, 6.0], 40.0, 0.01, 6.0), 0.0)


def test_strength_functions_take_arrays():
    te = np.array([[10.0, 40.0], [100.0, 1000.0]])
    assert exponential_strength_mpa(te, 45.0, 40.0, 0.8).shape == (2, 2)
    assert hyperbolic_strength_mpa(te, 40.0, 0.01, 6.0).shape == (2, 2)


def test_strength_form_lookup_lists_valid_forms():
    with pytest.raises(ValueError, match=r"'linear'.*\['exponential', 'hyperbolic'\]"):
        strength_form("linear")
    with pytest.raises(ValueError, match="expected one of"):
        StrengthMaturity(form="power", ultimate_mpa=40.0)


def test_strength_maturity_object_matches_the_functions():
    exponential = StrengthMaturity("exponential", 45.0, tau_h=40.0, beta=0.8)
    hyperbolic = StrengthMaturity("hyperbolic", 40.0, rate_per_h=0.01, offset_h=6.0)
    # same formulas as above: Su/e at te = tau, Su/2 at k (t - t0) = 1
    assert exponential.strength_mpa(40.0) == pytest.approx(45.0 / math.e)
    assert hyperbolic.strength_mpa(106.0) == pytest.approx(20.0)
    assert exponential.coefficients() == {"ultimate_mpa": 45.0, "tau_h": 40.0, "beta": 0.8}
    with pytest.raises(ValueError, match="needs"):
        StrengthMaturity("hyperbolic", 40.0, rate_per_h=0.01)


# ---------------------------------------------------------------- fitting to lab cylinders


@pytest.mark.parametrize("form", ["exponential", "hyperbolic"])
def test_fit_recovers_known_coefficients_from_noisy_lab_data(form):
    # Closed loop: 54 cylinders (6 ages x 3 curing temperatures x 3 replicates) made with the
    # model plus N(0, 0.3 MPa) noise, seed fixed. Tolerance: each coefficient within 5 % of the
    # truth (the hyperbolic offset t0, an age near zero, within 1 h: its standard error here is
    # about 0.25 h) and within 3 of its own standard errors (a 3-sigma band of the asymptotic
    # estimate).
    age, temperature, strength = lab_data(form)
    fitted, errors = fit_strength_maturity(age, temperature, strength, form, ACTIVATION_J_MOL)
    assert fitted.form == form
    assert fitted.activation_energy_j_mol == ACTIVATION_J_MOL
    for name, true in TRUE_BY_FORM[form].items():
        value = fitted.coefficients()[name]
        if name == "offset_h":
            assert value == pytest.approx(true, abs=1.0), name
        else:
            assert value == pytest.approx(true, rel=0.05), name
        assert 0.0 < errors[name] < np.inf, name
        assert abs(value - true) < 3.0 * errors[name], name
    # the residual scatter the errors are built from is the noise put in: rms within 25 % of 0.3
    te = arrhenius_factor(temperature, ACTIVATION_J_MOL) * age
    rms = np.sqrt(np.mean((fitted.strength_mpa(te) - strength) ** 2))
    assert rms == pytest.approx(NOISE_MPA, rel=0.25)


@pytest.mark.parametrize("form", ["exponential", "hyperbolic"])
def test_standard_errors_shrink_with_the_noise(form):
    # The errors are sqrt(diag((J^T J)^-1) * s^2) with s the residual rms: for the same data
    # pattern, ten times less noise gives close to ten times smaller errors (within 20 %, as the
    # Jacobian moves a little with the fitted coefficients).
    _, errors_1 = fit_strength_maturity(*lab_data(form, noise_mpa=0.3), form, ACTIVATION_J_MOL)
    _, errors_2 = fit_strength_maturity(*lab_data(form, noise_mpa=0.03), form, ACTIVATION_J_MOL)
    for name in errors_1:
        assert errors_1[name] / errors_2[name] == pytest.approx(10.0, rel=0.2), name


@pytest.mark.parametrize("form", ["exponential", "hyperbolic"])
def test_cylinders_cured_at_10_and_30_c_give_the_same_curve(form):
    # Equivalent age puts both curing temperatures on one curve: exact (noise-free) data at 10 C
    # alone and at 30 C alone each recover the true coefficients to 1e-4 relative, although at
    # the same real age the 30 C cylinders are much stronger than the 10 C ones.
    fits = []
    for curing_c in (10.0, 30.0):
        age, temperature, strength = lab_data(form, curing_c=np.array([curing_c]), noise_mpa=0.0)
        fitted, _ = fit_strength_maturity(age, temperature, strength, form, ACTIVATION_J_MOL)
        fits.append(fitted)
        for name, true in TRUE_BY_FORM[form].items():
            assert fitted.coefficients()[name] == pytest.approx(true, rel=1e-4), name
    te = np.linspace(12.0, 1000.0, 50)
    np.testing.assert_allclose(fits[0].strength_mpa(te), fits[1].strength_mpa(te), rtol=1e-4)
    # raw ages: at 72 h real age, te = 0.527 * 72 = 38 h at 10 C and 1.616 * 72 = 116 h at 30 C
    # (Arrhenius factors exp(-40000/8.314 (1/283.15 - 1/294.25)) = 0.527 and likewise 1.616)
    assert arrhenius_factor(10.0, ACTIVATION_J_MOL) == pytest.approx(0.527, abs=1e-3)
    assert arrhenius_factor(30.0, ACTIVATION_J_MOL) == pytest.approx(1.616, abs=1e-3)


def test_fit_with_one_temperature_for_all_cylinders():
    # A scalar curing temperature applies to every specimen; at 21.1 C the equivalent age is the
    # age itself (Arrhenius factor exp(0) = 1), so this is the plain ASTM C1074 X1 fit.
    age = np.repeat(TEST_AGES_H, REPLICATES)
    strength = hyperbolic_strength_mpa(age, **HYPERBOLIC_TRUE)
    fitted, _ = fit_strength_maturity(age, 21.1, strength, "hyperbolic", ACTIVATION_J_MOL)
    for name, true in HYPERBOLIC_TRUE.items():
        assert fitted.coefficients()[name] == pytest.approx(true, rel=1e-4), name


def test_fit_rejects_bad_input():
    age, temperature, strength = lab_data("exponential")
    with pytest.raises(ValueError, match="expected one of"):
        fit_strength_maturity(age, temperature, strength, "linear", ACTIVATION_J_MOL)
    with pytest.raises(ValueError, match="differ in size"):
        fit_strength_maturity(age, temperature, strength[:-1], "exponential", ACTIVATION_J_MOL)
    with pytest.raises(ValueError, match="more specimens"):
        fit_strength_maturity(age[:3], 21.1, strength[:3], "exponential", ACTIVATION_J_MOL)
    with pytest.raises(ValueError, match="non-negative"):
        fit_strength_maturity(-age, temperature, strength, "exponential", ACTIVATION_J_MOL)


# ---------------------------------------------------------------- time to a target strength


def test_time_to_strength_interpolates_between_samples():
    time_h = [0.0, 24.0, 48.0, 72.0]
    strength = [0.0, 10.0, 20.0, 25.0]
    # 15 MPa lies halfway between 10 MPa at 24 h and 20 MPa at 48 h: 24 + 0.5 * 24 = 36 h
    assert time_to_strength_h(time_h, strength, 15.0) == pytest.approx(36.0)
    # 22 MPa: 48 + (22 - 20)/(25 - 20) * 24 = 48 + 9.6 = 57.6 h
    assert time_to_strength_h(time_h, strength, 22.0) == pytest.approx(57.6)
    # exactly on a sample: that sample's time; at or above the target from the start: t[0]
    assert time_to_strength_h(time_h, strength, 20.0) == pytest.approx(48.0)
    assert time_to_strength_h(time_h, strength, 0.0) == 0.0


def test_time_to_strength_is_none_when_never_reached():
    assert time_to_strength_h([0.0, 24.0, 48.0], [0.0, 10.0, 20.0], 20.1) is None


def test_time_to_strength_along_a_forecast_temperature_history():
    # At a constant 21.1 C the equivalent age equals the real age; the exponential relation
    # reaches Su/e at te = tau = 40 h, so the target Su/e = 16.555 MPa is reached at 40 h
    # (to the interpolation error of 1 h samples on a smooth curve: 0.05 h).
    relation = StrengthMaturity("exponential", 45.0, tau_h=40.0, beta=0.8)
    time_h = np.arange(0.0, 201.0, 1.0)
    te = equivalent_age_h(time_h, np.full_like(time_h, 21.1), ACTIVATION_J_MOL)
    strength = relation.strength_mpa(te)
    assert time_to_strength_h(time_h, strength, 45.0 / math.e) == pytest.approx(40.0, abs=0.05)


# ---------------------------------------------------------------- cracking screening


def test_elastic_modulus_aci_318():
    # Ec = 4700 sqrt(30) = 4700 * 5.47723 = 25743 MPa (ACI 318-19, 19.2.2.1(b))
    assert elastic_modulus_mpa(30.0) == pytest.approx(25743.0, abs=1.0)
    # Ec = 4700 sqrt(25) = 4700 * 5 = 23500 MPa
    assert elastic_modulus_mpa(25.0) == pytest.approx(23500.0)


def test_splitting_tensile_strength():
    # fct = 0.56 sqrt(30) = 0.56 * 5.47723 = 3.067 MPa (ACI 318-19 relation, from memory)
    assert tensile_strength_mpa(30.0) == pytest.approx(3.067, abs=1e-3)
    # fct = 0.56 sqrt(25) = 0.56 * 5 = 2.80 MPa
    assert tensile_strength_mpa(25.0) == pytest.approx(2.80)


def test_internal_restraint_stress_by_hand():
    e_mpa = 4700.0 * math.sqrt(30.0)  # 25743 MPa, as above
    # Full restraint, no creep: sigma = 1 * 1 * 25743 * 10e-6 * 20 = 5.149 MPa
    full = internal_restraint_stress_mpa(20.0, e_mpa, 10e-6, 1.0, 1.0)
    assert full == pytest.approx(5.149, abs=1e-3)
    # Defaults R = 0.42, K = 0.65, alpha = 10e-6: sigma = 0.42 * 0.65 * 5.149 = 0.273 * 5.149
    # = 1.4056 MPa
    assert internal_restraint_stress_mpa(20.0, e_mpa) == pytest.approx(1.4056, abs=1e-3)
    # cracking index 1.4056 / 3.0672 = 0.4583; at full restraint 5.149 / 3.067 = 1.679
    ft = 0.56 * math.sqrt(30.0)
    assert cracking_index(1.4056, ft) == pytest.approx(0.4583, abs=1e-3)
    assert cracking_index(full, ft) == pytest.approx(1.679, abs=1e-3)


def test_external_restraint_stress_by_hand():
    # sigma = K_R K E alpha dT = 0.5 * 0.65 * 25000 * 10e-6 * 15 = 0.325 * 3.75 = 1.21875 MPa
    assert external_restraint_stress_mpa(15.0, 25000.0) == pytest.approx(1.21875)
    # the same with K_R = 1 (e.g. on much stiffer rock): twice that, 2.4375 MPa
    assert external_restraint_stress_mpa(15.0, 25000.0, restraint_factor=1.0) == pytest.approx(
        2.4375
    )


def test_allowable_differential_inverts_the_index():
    e_mpa, ft = 4700.0 * math.sqrt(30.0), 0.56 * math.sqrt(30.0)
    # dT = ft / (R K E alpha) = 3.0672 / (0.273 * 25743 * 10e-6) = 3.0672 / 0.070278 = 43.64 C
    allowed = allowable_differential_c(ft, e_mpa)
    assert allowed == pytest.approx(43.64, abs=0.01)
    # at that differential the index is exactly 1; with max_index 0.5 half the differential
    assert cracking_index(internal_restraint_stress_mpa(allowed, e_mpa), ft) == pytest.approx(1.0)
    assert allowable_differential_c(ft, e_mpa, max_index=0.5) == pytest.approx(allowed / 2.0)
    # with ft = eps_ctu E the defaults give CIRIA C660's dT = 3.7 eps_ctu / alpha (from memory):
    # 1 / (0.42 * 0.65) = 3.663, so for eps_ctu = 70e-6, 3.663 * 70e-6 / 10e-6 = 25.64 C
    assert allowable_differential_c(70e-6 * e_mpa, e_mpa) == pytest.approx(25.64, abs=0.01)


def test_cracking_index_rises_with_differential_and_restraint():
    e_mpa, ft = elastic_modulus_mpa(30.0), tensile_strength_mpa(30.0)
    differentials = np.array([0.0, 5.0, 10.0, 20.0, 30.0])
    by_differential = cracking_index(internal_restraint_stress_mpa(differentials, e_mpa), ft)
    assert by_differential[0] == 0.0
    assert np.all(np.diff(by_differential) > 0.0)
    restraints = np.array([0.1, 0.42, 0.7, 1.0])
    by_restraint = cracking_index(
        internal_restraint_stress_mpa(20.0, e_mpa, restraint_factor=restraints), ft
    )
    assert np.all(np.diff(by_restraint) > 0.0)
    # stress is linear in R: the index at R = 1 is 1/0.42 times the one at 0.42
    assert by_restraint[3] / by_restraint[1] == pytest.approx(1.0 / 0.42)


def test_cracking_index_is_safe_at_zero_tensile_strength():
    with np.errstate(all="raise"):
        index = cracking_index([0.0, 1.0, -1.0, 1.0], [0.0, 0.0, 0.0, 2.0])
    # 0/0 -> 0 by definition; 1/0 -> +inf; -1/0 -> -inf; 1/2 = 0.5
    np.testing.assert_array_equal(index, [0.0, np.inf, -np.inf, 0.5])
