"""In-place strength and thermal cracking screening along a forecast.

Strength follows the strength-maturity relation of the mix (ASTM C1074) along the temperature
history of each reported point; cracking risk is a screening estimate: the tensile stress of
the near-surface layer from the core-to-surface differential (internal restraint) plus that of
the whole section from the fall of its mean temperature (external restraint), each with the
modulus of the concrete at that age and a creep factor, over the tensile strength of the
near-surface concrete. Crack control decisions belong to the engineer of record.
"""

from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from model.cracking import (
    CRACKING_INDEX_LIMIT,
    EXTERNAL_RESTRAINT_FACTOR,
    INTERNAL_RESTRAINT_FACTOR,
    RELAXATION_FACTOR,
    THERMAL_EXPANSION_PER_K,
    allowable_differential_c,
    cracking_index,
    elastic_modulus_mpa,
    external_restraint_stress_mpa,
    internal_restraint_stress_mpa,
    tensile_strength_mpa,
)
from model.maturity import equivalent_age_h
from model.results import Forecast, time_of_max
from model.strength import StrengthMaturity, time_to_strength_h


@dataclass(frozen=True)
class CrackingSettings:
    """Inputs of the cracking screening (defaults and their sources in model.cracking).

    Attributes
    ----------
    thermal_expansion_per_k : coefficient of thermal expansion [1/K]
    internal_restraint : restraint factor of the near-surface layer by the core [-]
    external_restraint : restraint factor of the section by its base [-]
    relaxation_factor : creep (relaxation) factor [-]
    max_index : cracking index the allowable differential is computed for [-]
    """

    thermal_expansion_per_k: float = THERMAL_EXPANSION_PER_K
    internal_restraint: float = INTERNAL_RESTRAINT_FACTOR
    external_restraint: float = EXTERNAL_RESTRAINT_FACTOR
    relaxation_factor: float = RELAXATION_FACTOR
    max_index: float = CRACKING_INDEX_LIMIT


@dataclass(frozen=True)
class StrengthSeries:
    """In-place compressive strength on the forecast's reporting times [MPa]; and the hour each
    location reaches each target strength [h] (None if not within the forecast)."""

    core_mpa: NDArray[np.float64]
    surface_mpa: NDArray[np.float64]
    sensors_mpa: dict[str, NDArray[np.float64]]
    reached_h: dict[float, dict[str, float | None]] = field(default_factory=dict)


@dataclass(frozen=True)
class CrackingSeries:
    """Cracking screening on the reporting times.

    Attributes
    ----------
    internal_stress_mpa, external_stress_mpa : tensile stresses [MPa]
    index : (internal + external stress) / near-surface tensile strength [-]
    allowable_differential_c : differential that keeps the index at ``max_index`` given the
        external stress at that time [C] (NaN before the concrete has strength)
    max_index, max_index_time_h : largest index [-] and when [h]
    """

    internal_stress_mpa: NDArray[np.float64]
    external_stress_mpa: NDArray[np.float64]
    index: NDArray[np.float64]
    allowable_differential_c: NDArray[np.float64]
    max_index: float
    max_index_time_h: float


def in_place_strength(
    result: Forecast,
    relation: StrengthMaturity,
    activation_energy_j_mol: float,
    targets_mpa: tuple[float, ...] = (),
) -> StrengthSeries:
    """Strength at the hottest point, the near-surface point and each sensor.

    The equivalent age of each is integrated from its reported temperature history with the
    relation's activation energy (ASTM C1074), at the relation's reference temperature.
    """

    def strength(temperature_c: NDArray[np.float64]) -> NDArray[np.float64]:
        age = equivalent_age_h(
            result.time_h, temperature_c, activation_energy_j_mol, relation.reference_c
        )
        return relation.strength_mpa(age)

    series = StrengthSeries(
        core_mpa=strength(result.core_c),
        surface_mpa=strength(result.surface_c),
        sensors_mpa={s: strength(t) for s, t in result.sensors_c.items()},
    )
    locations = {
        "core": series.core_mpa,
        "surface": series.surface_mpa,
        **{f"sensor {s}": v for s, v in series.sensors_mpa.items()},
    }
    for target in targets_mpa:
        series.reached_h[target] = {
            name: time_to_strength_h(result.time_h, values, target)
            for name, values in locations.items()
        }
    return series


def cracking_screening(
    result: Forecast, strength: StrengthSeries, settings: CrackingSettings
) -> CrackingSeries:
    """Cracking index along the forecast (a screening estimate, see the module note)."""
    surface_modulus = elastic_modulus_mpa(strength.surface_mpa)
    core_modulus = elastic_modulus_mpa(strength.core_mpa)
    tensile = tensile_strength_mpa(strength.surface_mpa)
    internal = internal_restraint_stress_mpa(
        result.differential_c,
        surface_modulus,
        settings.thermal_expansion_per_k,
        settings.internal_restraint,
        settings.relaxation_factor,
    )
    mean_drop = np.maximum.accumulate(result.mean_c) - result.mean_c
    external = external_restraint_stress_mpa(
        mean_drop,
        core_modulus,
        settings.thermal_expansion_per_k,
        settings.external_restraint,
        settings.relaxation_factor,
    )
    index = cracking_index(internal + external, tensile)
    with np.errstate(divide="ignore", invalid="ignore"):
        allowed_total = allowable_differential_c(
            tensile,
            surface_modulus,
            settings.thermal_expansion_per_k,
            settings.internal_restraint,
            settings.relaxation_factor,
            settings.max_index,
        )
        allowed = allowed_total * (1.0 - external / (settings.max_index * tensile))
    allowed = np.where(tensile > 0, allowed, np.nan)
    finite = np.where(np.isfinite(index), index, 0.0)
    peak, when = time_of_max(result.time_h, finite)
    return CrackingSeries(internal, external, finite, allowed, peak, when)
