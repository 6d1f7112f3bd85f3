"""Thermal cracking screening: restraint stress against tensile strength.

This is a SCREENING ESTIMATE, not a stress analysis. Each stress is one number from a temperature
difference, a restraint factor and a creep (relaxation) factor, in the manner of ACI 207.2R and of
the early-age crack-control guidance of CIRIA C660; it ignores the shape of the temperature
profile, the history of modulus and creep, shrinkage and reinforcement. Use it to rank pours and
insulation choices and to flag those that deserve a proper thermo-mechanical analysis; a cracking
index well below 1 is reassuring, one near or above 1 is not a prediction that cracks will form
(nor is one below 1 a guarantee that they will not).

The stresses are tensile-positive [MPa]. The modulus and tensile strength are meant to be taken at
the age of the differential, e.g. from the in-place strength of :mod:`model.strength`.

References
----------
ACI Committee 207 (2007), "Report on Thermal and Volume Change Effects on Cracking of Mass
Concrete", ACI 207.2R-07.
ACI Committee 318 (2019), "Building Code Requirements for Structural Concrete", ACI 318-19.
Bamforth, P. B. (2007), "Early-age thermal crack control in concrete", CIRIA C660.
"""

import numpy as np
from numpy.typing import ArrayLike, NDArray

MODULUS_COEFFICIENT_MPA05 = 4700.0
"""Ec / sqrt(f'c) for normal-weight concrete [MPa^0.5] (ACI 318-19, 19.2.2.1(b))."""

SPLITTING_TENSILE_COEFFICIENT_MPA05 = 0.56
"""fct / sqrt(f'c), average splitting tensile strength of normal-weight concrete [MPa^0.5]
(ACI 318-19, the relation fct = 0.56 sqrt(f'c) behind the lightweight factor of 19.2.4.3 and its
commentary; from memory)."""

THERMAL_EXPANSION_PER_K = 10e-6
"""Default coefficient of thermal expansion [1/K]: typical of concrete with siliceous aggregate
(from memory; ACI 207 reports roughly 6e-6 for limestone to 13e-6 for quartzite aggregate)."""

RELAXATION_FACTOR = 0.65
"""Default reduction of the elastic stress for creep (stress relaxation) at early age [-]:
the coefficient K1 = 0.65 of CIRIA C660, the same idea as the sustained modulus of ACI 207.2R
(from memory)."""

INTERNAL_RESTRAINT_FACTOR = 0.42
"""Default restraint of the surface zone by the warmer core [-]: the internal restraint factor
R = 0.42 of CIRIA C660, which with K1 = 0.65 gives its limiting differential
dT = 3.7 eps_ctu / alpha (from memory)."""

EXTERNAL_RESTRAINT_FACTOR = 0.5
"""Default restraint of a placement by the concrete or rock it was cast on [-]: ACI 207.2R's
restraint at the base (full, K_R = 1 at the joint) times its foundation-stiffness multiplier
1 / (1 + Ag Ec / (Af Ef)), which is 0.5 for a foundation of the same modulus and section area
as the new concrete (from memory)."""

CRACKING_INDEX_LIMIT = 1.0
"""Default largest cracking index (stress / tensile strength) [-]: 1 is the onset of cracking by
this estimate; choose a smaller value for a margin (common practice, no source)."""


def elastic_modulus_mpa(compressive_mpa: ArrayLike) -> NDArray[np.float64]:
    """Modulus of elasticity of normal-weight concrete from its compressive strength [MPa].

    Parameters
    ----------
    compressive_mpa : compressive strength f'c [MPa]

    Notes
    -----
    ``Ec = 4700 sqrt(f'c)`` (ACI 318-19, 19.2.2.1(b), normal-weight concrete, SI units).
    """
    return MODULUS_COEFFICIENT_MPA05 * np.sqrt(np.asarray(compressive_mpa, dtype=float))


def tensile_strength_mpa(compressive_mpa: ArrayLike) -> NDArray[np.float64]:
    """Splitting tensile strength of normal-weight concrete from its compressive strength [MPa].

    Parameters
    ----------
    compressive_mpa : compressive strength f'c [MPa]

    Notes
    -----
    ``fct = 0.56 sqrt(f'c)`` (ACI 318-19, the average splitting tensile strength of normal-weight
    concrete used to define the lightweight factor, 19.2.4.3 and commentary; from memory). The
    direct tensile strength of concrete is commonly lower than the splitting strength, so the
    index computed with it is not conservative by a margin.
    """
    return SPLITTING_TENSILE_COEFFICIENT_MPA05 * np.sqrt(np.asarray(compressive_mpa, dtype=float))


def _restraint_stress_mpa(
    temperature_change_c: ArrayLike,
    modulus_mpa: ArrayLike,
    thermal_expansion_per_k: ArrayLike,
    restraint_factor: ArrayLike,
    relaxation_factor: ArrayLike,
) -> NDArray[np.float64]:
    """``R * K * E * alpha * dT`` [MPa], the common form of both restraint stresses."""
    return (
        np.asarray(restraint_factor, dtype=float)
        * np.asarray(relaxation_factor, dtype=float)
        * np.asarray(modulus_mpa, dtype=float)
        * np.asarray(thermal_expansion_per_k, dtype=float)
        * np.asarray(temperature_change_c, dtype=float)
    )


def internal_restraint_stress_mpa(
    differential_c: ArrayLike,
    modulus_mpa: ArrayLike,
    thermal_expansion_per_k: ArrayLike = THERMAL_EXPANSION_PER_K,
    restraint_factor: ArrayLike = INTERNAL_RESTRAINT_FACTOR,
    relaxation_factor: ArrayLike = RELAXATION_FACTOR,
) -> NDArray[np.float64]:
    """Tensile stress at the surface from the core-to-surface differential (screening) [MPa].

    Parameters
    ----------
    differential_c : core minus near-surface temperature dT [C]
    modulus_mpa : modulus of elasticity E at that age [MPa]
    thermal_expansion_per_k : coefficient of thermal expansion alpha [1/K]
    restraint_factor : internal restraint factor R [-]
    relaxation_factor : creep (relaxation) factor K [-]

    Notes
    -----
    ``sigma = R * K * E * alpha * dT``: the free thermal strain of the cooler surface relative to
    the core, restrained by the fraction R and relaxed by creep (ACI 207.2R's restrained-strain
    approach with a sustained modulus; CIRIA C660's R = 0.42 and K1 = 0.65 as defaults, from
    memory). For comparison, elastic theory for a free slab with a parabolic profile puts the
    surface stress at ``(2/3) E alpha dT`` (uniaxial), and a linear profile from core to surface
    at ``(1/2) E alpha dT``, both without creep: R = 0.5 to 0.67 (from memory). A negative
    differential gives a negative (compressive) surface stress.
    """
    return _restraint_stress_mpa(
        differential_c, modulus_mpa, thermal_expansion_per_k, restraint_factor, relaxation_factor
    )


def external_restraint_stress_mpa(
    mean_temperature_drop_c: ArrayLike,
    modulus_mpa: ArrayLike,
    thermal_expansion_per_k: ArrayLike = THERMAL_EXPANSION_PER_K,
    restraint_factor: ArrayLike = EXTERNAL_RESTRAINT_FACTOR,
    relaxation_factor: ArrayLike = RELAXATION_FACTOR,
) -> NDArray[np.float64]:
    """Tensile stress from the cooling of the whole section against its base (screening) [MPa].

    Parameters
    ----------
    mean_temperature_drop_c : fall of the mean section temperature from its peak (or from the
        temperature at which the concrete set) to its final value dT_mean [C]
    modulus_mpa : modulus of elasticity E at that age [MPa]
    thermal_expansion_per_k : coefficient of thermal expansion alpha [1/K]
    restraint_factor : external restraint factor K_R [-]
    relaxation_factor : creep (relaxation) factor K [-]

    Notes
    -----
    ``sigma = K_R * K * E * alpha * dT_mean`` (ACI 207.2R, restrained volume change with a
    sustained modulus). ACI 207.2R gives K_R at the centre section of a wall or slab on a rigid
    base as ``((L/H - 2)/(L/H + 1))**(h/H)`` for L/H >= 2.5 and
    ``((L/H - 1)/(L/H + 10))**(h/H)`` for L/H < 2.5, full (1) at the joint, times
    ``1 / (1 + Ag Ec / (Af Ef))`` for the stiffness of the base (from memory). The default, 0.5,
    is the joint of a placement on a base of the same modulus and section area; use a larger
    value on rock or old mass concrete much stiffer than the new pour.
    """
    return _restraint_stress_mpa(
        mean_temperature_drop_c,
        modulus_mpa,
        thermal_expansion_per_k,
        restraint_factor,
        relaxation_factor,
    )


def cracking_index(stress_mpa: ArrayLike, tensile_mpa: ArrayLike) -> NDArray[np.float64]:
    """Cracking index: restraint stress over tensile strength [-].

    Parameters
    ----------
    stress_mpa : tensile-positive restraint stress [MPa]
    tensile_mpa : tensile strength at the same age [MPa]

    Returns
    -------
    ``sigma / ft`` [-]: below 1 the screening estimate predicts no cracking. Where ``ft = 0`` it is
    0 for zero stress and +inf (-inf) for a tensile (compressive) stress; no warnings are raised.

    Notes
    -----
    The ratio used in ACI 207.2R's comparison of restraint stress with tensile capacity; Japanese
    practice (JSCE) quotes its inverse, ``ft / sigma`` (from memory).
    """
    stress = np.asarray(stress_mpa, dtype=float)
    tensile = np.asarray(tensile_mpa, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        index = stress / tensile
    return np.where((tensile == 0.0) & (stress == 0.0), 0.0, index)


def allowable_differential_c(
    tensile_mpa: ArrayLike,
    modulus_mpa: ArrayLike,
    thermal_expansion_per_k: ArrayLike = THERMAL_EXPANSION_PER_K,
    restraint_factor: ArrayLike = INTERNAL_RESTRAINT_FACTOR,
    relaxation_factor: ArrayLike = RELAXATION_FACTOR,
    max_index: ArrayLike = CRACKING_INDEX_LIMIT,
) -> NDArray[np.float64]:
    """Core-to-surface differential at which the internal-restraint index equals ``max_index`` [C].

    Parameters
    ----------
    tensile_mpa : tensile strength ft [MPa]
    modulus_mpa : modulus of elasticity E [MPa]
    thermal_expansion_per_k : coefficient of thermal expansion alpha [1/K]
    restraint_factor : internal restraint factor R [-]
    relaxation_factor : creep (relaxation) factor K [-]
    max_index : largest acceptable cracking index [-]

    Notes
    -----
    Solving ``R K E alpha dT / ft = max_index`` for dT:
    ``dT = max_index * ft / (R K E alpha)`` (the inverse of :func:`internal_restraint_stress_mpa`
    and :func:`cracking_index`). With ``ft = eps_ctu E`` and the defaults this is CIRIA C660's
    ``dT = 3.7 eps_ctu / alpha`` (from memory). +inf where the denominator is zero and ft > 0.
    """
    denominator = _restraint_stress_mpa(
        1.0, modulus_mpa, thermal_expansion_per_k, restraint_factor, relaxation_factor
    )
    with np.errstate(divide="ignore", invalid="ignore"):
        return (
            np.asarray(max_index, dtype=float) * np.asarray(tensile_mpa, dtype=float) / denominator
        )
