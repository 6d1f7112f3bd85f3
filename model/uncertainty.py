"""Uncertainty bands: whole forecasts over a Latin hypercube sample of the uncertain inputs.

The inputs varied are the placement temperature and the air temperature (normal, additive, in
C) and the total heat Hu and the time parameter tau of hydration (normal, relative); the
sample is a seeded Latin hypercube (McKay, Beckman & Conover 1979, Technometrics 21(2)) mapped
through the normal quantile function, so a run is repeatable.
"""

from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray
from scipy.stats import norm, qmc

from model.ambient import Ambient
from model.scenario import Scenario

MIN_RELATIVE_FACTOR = 0.2
"""Sampled Hu and tau are kept above this fraction of their nominal values [-]."""


@dataclass(frozen=True)
class Spreads:
    """Standard deviations of the uncertain inputs.

    Attributes
    ----------
    placement_sd_c : placement temperature [C]
    air_sd_c : shift of the whole air temperature history [C]
    total_heat_rel_sd : Hu, relative [-]
    tau_rel_sd : tau, relative [-]
    """

    placement_sd_c: float = 1.0
    air_sd_c: float = 2.0
    total_heat_rel_sd: float = 0.05
    tau_rel_sd: float = 0.10


def shifted_air(ambient: Ambient, delta_c: float) -> Ambient:
    """The same weather with every air temperature raised by ``delta_c`` [C]."""
    if ambient.daily_min_c is not None and ambient.daily_max_c is not None:
        return replace(
            ambient,
            daily_min_c=ambient.daily_min_c + delta_c,
            daily_max_c=ambient.daily_max_c + delta_c,
        )
    if isinstance(ambient.air_c, tuple):
        return replace(ambient, air_c=tuple(t + delta_c for t in ambient.air_c))
    return replace(ambient, air_c=ambient.air_c + delta_c)


def standard_normal_sample(samples: int, dimensions: int, seed: int) -> NDArray[np.float64]:
    """A seeded Latin hypercube of standard normal deviates, shape (samples, dimensions)."""
    unit = qmc.LatinHypercube(d=dimensions, seed=seed).random(samples)
    return norm.ppf(unit)


def sample_scenarios(
    scenario: Scenario, spreads: Spreads, samples: int, seed: int
) -> list[Scenario]:
    """Scenarios with the uncertain inputs drawn from their distributions."""
    z = standard_normal_sample(samples, 4, seed)
    hyd = scenario.concrete.hydration
    out = []
    for zp, za, zh, zt in z:
        hydration = replace(
            hyd,
            total_heat_j_kg=hyd.total_heat_j_kg
            * max(MIN_RELATIVE_FACTOR, 1.0 + zh * spreads.total_heat_rel_sd),
            tau_h=hyd.tau_h * max(MIN_RELATIVE_FACTOR, 1.0 + zt * spreads.tau_rel_sd),
        )
        out.append(
            replace(
                scenario,
                placement_c=scenario.placement_c + zp * spreads.placement_sd_c,
                ambient=shifted_air(scenario.ambient, za * spreads.air_sd_c),
                concrete=replace(scenario.concrete, hydration=hydration),
            )
        )
    return out


def percentiles(values: NDArray[np.float64], levels: tuple[float, ...] = (10, 50, 90)) -> dict:
    """Percentiles of a sample, keyed "p10", "p50", "p90" [unit of the values]."""
    return {f"p{int(p)}": float(np.percentile(values, p)) for p in levels}
