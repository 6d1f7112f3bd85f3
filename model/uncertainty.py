"""Uncertainty bands: whole forecasts over a Latin hypercube sample of the uncertain inputs.

The inputs varied are the placement temperature and the air temperature (normal, additive, in
C) and the total heat Hu and the time parameter tau of hydration (normal, relative); the
sample is a seeded Latin hypercube (McKay, Beckman & Conover 1979, Technometrics 21(2)) mapped
through the normal quantile function, so a run is repeatable.
"""

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy.stats import norm, qmc

from model.scenario import Scenario, Variations

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


def standard_normal_sample(samples: int, dimensions: int, seed: int) -> NDArray[np.float64]:
    """A seeded Latin hypercube of standard normal deviates, shape (samples, dimensions)."""
    unit = qmc.LatinHypercube(d=dimensions, seed=seed).random(samples)
    return norm.ppf(unit)


def sample_variations(spreads: Spreads, samples: int, seed: int) -> Variations:
    """The uncertain inputs drawn from their distributions, one variant per sample."""
    z = standard_normal_sample(samples, 4, seed)
    return Variations(
        placement_shift_c=z[:, 0] * spreads.placement_sd_c,
        air_shift_c=z[:, 1] * spreads.air_sd_c,
        total_heat_factor=np.maximum(
            MIN_RELATIVE_FACTOR, 1.0 + z[:, 2] * spreads.total_heat_rel_sd
        ),
        tau_factor=np.maximum(MIN_RELATIVE_FACTOR, 1.0 + z[:, 3] * spreads.tau_rel_sd),
    )


def sample_scenarios(
    scenario: Scenario, spreads: Spreads, samples: int, seed: int
) -> list[Scenario]:
    """Scenarios with the uncertain inputs drawn from their distributions (for shapes that are
    not stepped as one batch)."""
    variations = sample_variations(spreads, samples, seed)
    return [variations.scenario(scenario, i) for i in range(samples)]


def percentiles(values: NDArray[np.float64], levels: tuple[float, ...] = (10, 50, 90)) -> dict:
    """Percentiles of a sample, keyed "p10", "p50", "p90" [unit of the values]."""
    return {f"p{int(p)}": float(np.percentile(values, p)) for p in levels}
