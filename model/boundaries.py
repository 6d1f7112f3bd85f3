"""Heat exchange at the faces of a placement: convection, long-wave radiation, insulation, sun.

References
----------
Watmuff, J. H., Charters, W. W. S. and Proctor, D. (1977), "Solar and wind induced external
coefficients for solar collectors", COMPLES 2, 56; as quoted by Duffie, J. A. and Beckman, W. A.,
"Solar Engineering of Thermal Processes", 4th ed. (2013), section 3.15, eq. 3.15.3.
Incropera, F. P. et al., "Fundamentals of Heat and Mass Transfer", 6th ed. (2007), eq. 1.9
(linearised radiation coefficient).
"""

import numpy as np
from numpy.typing import ArrayLike, NDArray

from model.maturity import KELVIN_OFFSET

STEFAN_BOLTZMANN_W_M2K4 = 5.670374419e-8
"""Stefan-Boltzmann constant [W/(m2 K4)]."""
CONCRETE_EMISSIVITY = 0.9
"""Long-wave emissivity of concrete, formwork and blankets [-] (from memory)."""


def convection_coefficient_w_m2k(wind_m_s: ArrayLike) -> NDArray[np.float64]:
    """Wind-driven convection coefficient of an outdoor surface [W/(m2 K)].

    Notes
    -----
    ``h_c = 2.8 + 3.0 V`` with V the wind speed in m/s (Watmuff et al. 1977, via Duffie &
    Beckman eq. 3.15.3); convection only, radiation is added separately.
    """
    return 2.8 + 3.0 * np.maximum(np.asarray(wind_m_s, dtype=float), 0.0)


def radiation_coefficient_w_m2k(
    temperature_c: ArrayLike, emissivity: float = CONCRETE_EMISSIVITY
) -> NDArray[np.float64]:
    """Linearised long-wave radiation coefficient [W/(m2 K)].

    Notes
    -----
    ``h_r = 4 eps sigma T^3`` (Incropera eq. 1.9 in its small-difference form), evaluated at
    the air temperature; the sky is taken at air temperature.
    """
    t_k = np.asarray(temperature_c, dtype=float) + KELVIN_OFFSET
    return 4.0 * emissivity * STEFAN_BOLTZMANN_W_M2K4 * t_k**3


def surface_conductance_w_m2k(film_w_m2k: ArrayLike, resistance_m2k_w: ArrayLike) -> NDArray:
    """Overall conductance of a film in series with insulation or formwork [W/(m2 K)].

    Notes
    -----
    ``U = 1 / (R + 1/h)``: resistances in series.
    """
    return 1.0 / (np.asarray(resistance_m2k_w, dtype=float) + 1.0 / np.asarray(film_w_m2k))


def sol_air_temperature_c(
    air_c: ArrayLike, absorbed_solar_w_m2: ArrayLike, film_w_m2k: ArrayLike
) -> NDArray[np.float64]:
    """Sol-air temperature [C]: the air temperature raised by the sun absorbed on the outer face.

    Notes
    -----
    ``T_sa = T_air + a I / h``; with insulation of resistance R between the outer face and the
    concrete, the heat flow into the concrete is ``(T_sa - T_s) / (R + 1/h)``.
    """
    return np.asarray(air_c, dtype=float) + np.asarray(absorbed_solar_w_m2) / np.asarray(film_w_m2k)
