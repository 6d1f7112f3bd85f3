"""Maturity functions: Arrhenius equivalent age and the Nurse-Saul temperature-time factor.

References
----------
ASTM C1074, "Standard Practice for Estimating Concrete Strength by the Maturity Method".
Freiesleben Hansen, P. and Pedersen, E. J. (1977), "Maturity computer for controlled curing and
hardening of concrete", Nordisk Betong 1, 19-34.
"""

import numpy as np
from numpy.typing import ArrayLike, NDArray

GAS_CONSTANT_J_MOLK = 8.314
"""Universal gas constant [J/(mol K)]."""

KELVIN_OFFSET = 273.15
"""Offset from degrees Celsius to kelvin [K]."""

HYDRATION_REFERENCE_C = 21.1
"""Reference temperature of the hydration model's equivalent age [C] (Schindler & Folliard 2005)."""

NURSE_SAUL_DATUM_C = 0.0
"""Default datum temperature of the Nurse-Saul function [C] (ASTM C1074 default for Type I cement,
from memory; a setting)."""


def arrhenius_factor(
    temperature_c: ArrayLike,
    activation_energy_j_mol: ArrayLike,
    reference_c: float = HYDRATION_REFERENCE_C,
) -> NDArray[np.float64]:
    """Rate of equivalent age per unit real time [h/h] (Freiesleben Hansen & Pedersen 1977).

    Parameters
    ----------
    temperature_c : concrete temperature [C]
    activation_energy_j_mol : apparent activation energy Ea [J/mol]
    reference_c : reference temperature [C]

    Notes
    -----
    ``d(te)/dt = exp(-Ea/R * (1/(273.15+T) - 1/(273.15+Tr)))`` (ASTM C1074, eq. for te).
    """
    t_k = np.asarray(temperature_c, dtype=float) + KELVIN_OFFSET
    tr_k = reference_c + KELVIN_OFFSET
    return np.exp(
        -np.asarray(activation_energy_j_mol) / GAS_CONSTANT_J_MOLK * (1.0 / t_k - 1.0 / tr_k)
    )


def arrhenius_factor_slope(
    temperature_c: ArrayLike,
    activation_energy_j_mol: ArrayLike,
    reference_c: float = HYDRATION_REFERENCE_C,
    factor: NDArray[np.float64] | None = None,
) -> NDArray[np.float64]:
    """Derivative of :func:`arrhenius_factor` with respect to temperature [1/K]; ``factor``,
    if given, is that function's value at the same temperatures (saves computing it again)."""
    t_k = np.asarray(temperature_c, dtype=float) + KELVIN_OFFSET
    if factor is None:
        factor = arrhenius_factor(temperature_c, activation_energy_j_mol, reference_c)
    return factor * np.asarray(activation_energy_j_mol) / (GAS_CONSTANT_J_MOLK * t_k**2)


def equivalent_age_h(
    time_h: ArrayLike,
    temperature_c: ArrayLike,
    activation_energy_j_mol: float,
    reference_c: float = HYDRATION_REFERENCE_C,
) -> NDArray[np.float64]:
    """Equivalent age at the reference temperature along a temperature history [h].

    Parameters
    ----------
    time_h : times since placement, increasing [h]
    temperature_c : concrete temperature at those times [C]
    activation_energy_j_mol : apparent activation energy [J/mol]
    reference_c : reference temperature [C]

    Notes
    -----
    ASTM C1074 equivalent age, ``te = sum exp(-E/R (1/T - 1/Tr)) dt``, integrated here with the
    trapezoidal rule on the given samples; te(0) = 0.
    """
    t = np.asarray(time_h, dtype=float)
    rate = arrhenius_factor(temperature_c, activation_energy_j_mol, reference_c)
    increments = 0.5 * (rate[1:] + rate[:-1]) * np.diff(t)
    return np.concatenate([[0.0], np.cumsum(increments)])


def nurse_saul_factor_ch(
    time_h: ArrayLike, temperature_c: ArrayLike, datum_c: float = NURSE_SAUL_DATUM_C
) -> NDArray[np.float64]:
    """Nurse-Saul temperature-time factor along a temperature history [C h].

    Parameters
    ----------
    time_h : times since placement, increasing [h]
    temperature_c : concrete temperature at those times [C]
    datum_c : datum temperature below which no strength gain is counted [C]

    Notes
    -----
    ASTM C1074, ``M(t) = sum max(Ta - T0, 0) dt``, trapezoidal rule on the samples; M(0) = 0.
    """
    t = np.asarray(time_h, dtype=float)
    excess = np.maximum(np.asarray(temperature_c, dtype=float) - datum_c, 0.0)
    increments = 0.5 * (excess[1:] + excess[:-1]) * np.diff(t)
    return np.concatenate([[0.0], np.cumsum(increments)])
