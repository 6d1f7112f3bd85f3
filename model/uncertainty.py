"""Uncertainty bands: whole forecasts over a Latin hypercube sample of the uncertain inputs.

The inputs varied are the placement temperature and the air temperature (normal, additive, in
C) and the total heat Hu and the time parameter tau of hydration (normal, relative); the
sample is a seeded Latin hypercube (McKay, Beckman & Conover 1979, Technometrics 21(2)) mapped
through the normal quantile function, so a run is repeatable.

A P10-P90 band is meant to hold the true value 80 % of the time when the truth varies as the
spreads say. Two things decide whether it does: where the percentiles are read off the sorted
sample (:func:`percentiles`), and how many samples there are (:func:`band_sampling`).
tests/test_uncertainty_coverage.py measures the coverage; the README gives the figures.
"""

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy.stats import norm, qmc

from model.scenario import Scenario, Variations

MIN_RELATIVE_FACTOR = 0.2
"""Sampled Hu and tau are kept above this fraction of their nominal values [-]."""

BAND_LOW_PCT, BAND_HIGH_PCT = 10.0, 90.0
"""The band's edges [percent]: a P10-P90 band, nominally holding 80 % of outcomes."""
MAX_BAND_CONTENT_SD = 0.05
"""A band counts as stable when the standard deviation of the probability it holds, from one
sample to another, is at most this (5 percentage points) [-]."""


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


def offset_corrected(
    coarse_c: NDArray[np.float64], coarse_nominal_c: float, nominal_c: float
) -> NDArray[np.float64]:
    """Sample values forecast on the coarse grid (``Scenario.coarsened``), shifted by the grid
    offset at the nominal inputs, ``nominal - coarse_nominal`` [C].

    The grid error hardly changes across the spreads of a band, so the shifted coarse values
    stand for the fine ones (additive correction of a low-fidelity model, e.g. Peherstorfer,
    Willcox & Gunzburger, "Survey of multifidelity methods in uncertainty propagation,
    inference, and optimization", SIAM Review 60(3), 2018). Measured over 16 samples of the
    default spreads: a 2D footing's and a 3D block's P10/P50/P90 of peak and maximum
    differential within 0.007 C of the bands from forecasts on their own grids, each sample
    within 0.015 C; the pier example's (8 samples) within 0.09 C, where the unshifted coarse
    values are 0.57 C off (tests/test_uncertainty_coverage.py checks a section).
    """
    return np.asarray(coarse_c, dtype=float) + (nominal_c - coarse_nominal_c)


def percentiles(
    values: NDArray[np.float64], levels: tuple[float, ...] = (BAND_LOW_PCT, 50.0, BAND_HIGH_PCT)
) -> dict:
    """Percentiles of a Latin hypercube sample, keyed "p10", "p50", "p90" [unit of the values].

    Notes
    -----
    The p-th percentile is read at rank ``p n + 1/2`` of the n sorted values, interpolating
    linearly (Hazen's plotting position, numpy's ``method="hazen"``). A Latin hypercube puts one
    sample in each of n equal-probability strata of every input, so the k-th smallest of an
    output that grows with one dominant input sits near probability ``(k - 1/2) / n``; reading
    P10 and P90 there gives bands that hold 80 % of outcomes. numpy's default (rank
    ``1 + p (n - 1)``) reads them too far inside: with 32 samples such bands held 77-78 % of
    outcomes instead of 80 % (see the README, "How the numerics were checked").
    """
    return {f"p{int(p)}": float(np.percentile(values, p, method="hazen")) for p in levels}


def band_content_sd(samples: int) -> float:
    """Standard deviation of the probability held between the P10 and P90 of ``samples``
    independent draws [-].

    Notes
    -----
    The probability between two order statistics X_(r) < X_(s) of n independent draws is
    Beta(s - r, n + 1 - s + r) distributed, whatever the distribution (Wilks 1941, Annals of
    Mathematical Statistics 12(1); David & Nagaraja, "Order Statistics", 3rd ed., 2003). For a
    P10-P90 band s - r = 0.8 (n + 1), so its mean is 0.8 and its variance
    ``0.8 x 0.2 / (n + 2)``. A Latin hypercube usually does better (measured: see the README);
    the bound for independent draws is the safe side.
    """
    content = (BAND_HIGH_PCT - BAND_LOW_PCT) / 100.0
    return float(np.sqrt(content * (1.0 - content) / (samples + 2)))


def min_stable_samples() -> int:
    """Fewest samples whose P10-P90 band content varies by at most MAX_BAND_CONTENT_SD: from
    ``0.8 x 0.2 / (n + 2) <= 0.05^2``, n >= 62."""
    content = (BAND_HIGH_PCT - BAND_LOW_PCT) / 100.0
    return int(np.ceil(content * (1.0 - content) / MAX_BAND_CONTENT_SD**2 - 2.0 - 1e-9))


def band_sampling(samples: int) -> dict:
    """How far a band of ``samples`` forecasts can be trusted to hold 80 % of outcomes: the
    sample count, the standard deviation of the band's content, the fewest samples for a stable
    band and whether ``samples`` reaches it."""
    needed = min_stable_samples()
    return {
        "samples": samples,
        "band_content_sd": round(band_content_sd(samples), 4),
        "min_stable_samples": needed,
        "enough_samples": samples >= needed,
    }
