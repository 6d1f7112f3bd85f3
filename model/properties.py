"""Thermal properties of hardening concrete.

References
----------
Schindler, A. K. (2002), "Concrete Hydration, Temperature Development, and Setting at Early-Ages",
PhD dissertation, The University of Texas at Austin (conductivity model, after Ruiz et al.).
Van Breugel, K. (1998), "Prediction of Temperature Development in Hardening Concrete", in
Prevention of Thermal Cracking in Concrete at Early Ages, RILEM Report 15, E&FN Spon.
"""

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

CEMENT_SPECIFIC_HEAT_J_KGK = 1140.0
"""Specific heat of unhydrated cement [J/(kg K)] (Van Breugel 1998, from memory)."""
WATER_SPECIFIC_HEAT_J_KGK = 4187.0
"""Specific heat of water [J/(kg K)]."""
AGGREGATE_SPECIFIC_HEAT_J_KGK = 800.0
"""Typical specific heat of siliceous or calcareous aggregate [J/(kg K)] (from memory)."""


def conductivity_w_mk(alpha: ArrayLike, hardened_conductivity_w_mk: float) -> NDArray[np.float64]:
    """Thermal conductivity of hardening concrete [W/(m K)].

    Parameters
    ----------
    alpha : degree of hydration [-]
    hardened_conductivity_w_mk : conductivity of the hardened concrete k_uc [W/(m K)]

    Notes
    -----
    ``k(alpha) = k_uc * (1.33 - 0.33 alpha)`` (Schindler 2002, eq. 2-26): fresh concrete conducts
    about a third better than hardened concrete.
    """
    return hardened_conductivity_w_mk * (1.33 - 0.33 * np.asarray(alpha, dtype=float))


@dataclass(frozen=True)
class MixMasses:
    """Masses per unit volume of concrete used by the Van Breugel specific heat [kg/m3]."""

    cementitious_kg_m3: float
    aggregate_kg_m3: float
    water_kg_m3: float

    @property
    def density_kg_m3(self) -> float:
        """Fresh density as the sum of the masses [kg/m3]."""
        return self.cementitious_kg_m3 + self.aggregate_kg_m3 + self.water_kg_m3


def specific_heat_j_kgk(
    alpha: ArrayLike,
    temperature_c: ArrayLike,
    masses: MixMasses,
    cement_specific_heat_j_kgk: float = CEMENT_SPECIFIC_HEAT_J_KGK,
    aggregate_specific_heat_j_kgk: float = AGGREGATE_SPECIFIC_HEAT_J_KGK,
    water_specific_heat_j_kgk: float = WATER_SPECIFIC_HEAT_J_KGK,
) -> NDArray[np.float64]:
    """Specific heat of hardening concrete [J/(kg K)] (Van Breugel 1998).

    Notes
    -----
    ``c = (Wc alpha c_cef + Wc (1 - alpha) c_c + Wa c_a + Ww c_w) / rho`` with the fictitious
    specific heat of the hydrated cement ``c_cef = 8.4 T + 339`` [J/(kg K)], T in C.
    """
    a = np.asarray(alpha, dtype=float)
    hydrated = 8.4 * np.asarray(temperature_c, dtype=float) + 339.0
    wc = masses.cementitious_kg_m3
    total = (
        wc * a * hydrated
        + wc * (1.0 - a) * cement_specific_heat_j_kgk
        + masses.aggregate_kg_m3 * aggregate_specific_heat_j_kgk
        + masses.water_kg_m3 * water_specific_heat_j_kgk
    )
    return total / masses.density_kg_m3
