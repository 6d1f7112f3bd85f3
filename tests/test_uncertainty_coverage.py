"""Do P10-P90 bands hold the truth 80 % of the time when the truth varies as the spreads say?

Two checks. First the statistics alone, sharp and cheap: Latin hypercube samples of the real
spreads pushed through a response whose distribution is known exactly, thousands of bands.
Then whole forecasts: "true" slab scenarios drawn independently from the spreads, and bands
forecast from the nominal scenario by the same function the service uses, with the user-facing
default sample count.
"""

import copy
import math

import numpy as np
import pytest
from scipy.stats import norm

from model.scenario import Variations
from model.solver import forecast, forecast_batch
from model.uncertainty import (
    Spreads,
    band_content_sd,
    band_sampling,
    min_stable_samples,
    percentiles,
    sample_scenarios,
    sample_variations,
)
from service.forecasting import uncertainty_band, validated_scenario
from service.schemas import UncertainScenarioIn, UncertaintyIn
from tests.conftest import CONTRACT_SCENARIO
from tests.scenarios import footing_on_ground

DEFAULT_SAMPLES = UncertaintyIn().samples
SPREADS = Spreads()


LHS_BANDS = 1000


@pytest.fixture(scope="module")
def lhs_samples() -> list[Variations]:
    """The inputs of LHS_BANDS bands of the default sample count (seeds 0, 1, ...)."""
    return [sample_variations(SPREADS, DEFAULT_SAMPLES, seed) for seed in range(LHS_BANDS)]


def _band_contents(
    weights: tuple[float, float, float, float], samples: list[Variations]
) -> np.ndarray:
    """Probability held by the P10-P90 band of each Latin hypercube sample of the response
    Y = w1 placement shift + w2 air shift + w3 (Hu factor - 1) + w4 (tau factor - 1), which
    is normal with mean 0 and standard deviation sqrt(sum (w_i sd_i)^2) under the spreads (the
    0.2 floor of the factors lies 16 and 8 standard deviations away)."""
    sds = np.array(
        [SPREADS.placement_sd_c, SPREADS.air_sd_c, SPREADS.total_heat_rel_sd, SPREADS.tau_rel_sd]
    )
    w = np.asarray(weights)
    sigma = float(np.sqrt(np.sum((w * sds) ** 2)))
    low, high = np.empty(len(samples)), np.empty(len(samples))
    for i, v in enumerate(samples):
        y = (
            w[0] * v.placement_shift_c
            + w[1] * v.air_shift_c
            + w[2] * (v.total_heat_factor - 1.0)
            + w[3] * (v.tau_factor - 1.0)
        )
        band = percentiles(y)
        low[i], high[i] = band["p10"], band["p90"]
    return norm.cdf(high / sigma) - norm.cdf(low / sigma)


@pytest.mark.parametrize(
    "weights",
    [
        (1.0, 0.0, 0.0, 0.0),  # one input decides
        (1.0, 0.5, 30.0, -10.0),  # four inputs, about equally (1, 1, 1.5, 1 C)
    ],
)
def test_latin_hypercube_bands_hold_80_percent(weights, lhs_samples):
    """1000 bands of 32 samples: the mean probability they hold is within 1.5 percentage
    points of 80 %. Sampling error of that mean: sd/sqrt(1000) < 0.07/31.6 = 0.0022, so 3
    standard errors are 0.7 points; the rest of the tolerance is the known residual bias of
    Hazen's rule when several inputs matter (measured: -0.7 points with four equal inputs, 0
    with one). numpy's default rule read 77.6 % and 76.9 % here and fails."""
    contents = _band_contents(weights, lhs_samples)
    assert contents.std() / math.sqrt(contents.size) < 0.0023
    assert contents.mean() == pytest.approx(0.80, abs=0.015)


def test_band_content_spread_matches_order_statistics(lhs_samples):
    """The sd of one band's content is at most the order-statistic value for independent
    draws, sqrt(0.8 x 0.2 / 34) = 0.0686 at 32 samples (Wilks 1941), allowing 10 % for the
    sampling error of an sd from 1000 bands (about 2.2 %, 3 standard errors 6.7 %)."""
    contents = _band_contents((1.0, 0.5, 30.0, -10.0), lhs_samples)
    assert band_content_sd(32) == pytest.approx(math.sqrt(0.16 / 34), rel=1e-12)
    assert contents.std() <= 1.1 * band_content_sd(DEFAULT_SAMPLES)


def test_stable_sample_count_threshold():
    # sqrt(0.16 / (n + 2)) <= 0.05  <=>  n + 2 >= 64  <=>  n >= 62
    assert min_stable_samples() == 62
    assert band_content_sd(62) == pytest.approx(0.05, rel=1e-12)
    assert band_content_sd(61) > 0.05
    assert band_sampling(61)["enough_samples"] is False
    assert band_sampling(62)["enough_samples"] is True


# --- whole forecasts -------------------------------------------------------------------------

TRUTHS = 800
BANDS = 24


def _cheap_slab():
    """The contract slab made cheaper to forecast many times: 1.5 m, 72 h, 0.1 m cells."""
    payload = copy.deepcopy(CONTRACT_SCENARIO)
    payload["element"]["thickness_m"] = 1.5
    payload["duration_h"] = 72
    payload["resolution"] = {"max_cell_m": 0.1}
    return validated_scenario(payload, UncertainScenarioIn)[1]


def _true_outcomes(scenario, rng: np.random.Generator) -> dict[str, np.ndarray]:
    """Peak and maximum differential of TRUTHS scenarios drawn independently (not a Latin
    hypercube) from normal distributions with the stated spreads, forecast in batches."""
    z = rng.standard_normal((TRUTHS, 4))
    outcomes: dict[str, list] = {"peak_temperature_c": [], "max_differential_c": []}
    for start in range(0, TRUTHS, 200):
        chunk = z[start : start + 200]
        truth = Variations(
            placement_shift_c=chunk[:, 0] * SPREADS.placement_sd_c,
            air_shift_c=chunk[:, 1] * SPREADS.air_sd_c,
            total_heat_factor=1.0 + chunk[:, 2] * SPREADS.total_heat_rel_sd,
            tau_factor=1.0 + chunk[:, 3] * SPREADS.tau_rel_sd,
        )
        batch = forecast_batch(scenario, truth)
        outcomes["peak_temperature_c"].append(batch.peak_temperature_c)
        outcomes["max_differential_c"].append(batch.max_differential_c)
    return {key: np.concatenate(values) for key, values in outcomes.items()}


def test_forecast_bands_hold_the_truth_80_percent_of_the_time():
    """800 true slabs against 24 bands (seeds 0-23) of 32 forecasts each, every truth against
    every band (the bands do not depend on the truth). The fraction inside, and the fractions
    below P10 and above P90, are compared with 80 %, 10 % and 10 % to within 3 standard errors,
    SE^2 = s^2/BANDS + p(1-p)/TRUTHS: the first term the variation of a band's content from seed
    to seed, s^2 = p(1-p)/(n+2) from order statistics of n = 32 independent draws (Latin
    hypercubes do better), the second the binomial error of the truths. For p = 0.8: SE =
    sqrt(0.0047/24 + 0.16/800) = 0.020; for p = 0.1: 0.015."""
    scenario = _cheap_slab()
    truth = _true_outcomes(scenario, np.random.default_rng(20261202))
    bands = [uncertainty_band(scenario, SPREADS, DEFAULT_SAMPLES, seed) for seed in range(BANDS)]

    def standard_error(p: float) -> float:
        return math.sqrt(p * (1 - p) / (DEFAULT_SAMPLES + 2) / BANDS + p * (1 - p) / TRUTHS)

    for key, values in truth.items():
        low = np.array([band[key]["p10"] for band in bands])
        high = np.array([band[key]["p90"] for band in bands])
        below = np.mean(values[:, None] < low[None, :])
        above = np.mean(values[:, None] > high[None, :])
        inside = 1.0 - below - above
        assert inside == pytest.approx(0.80, abs=3 * standard_error(0.80)), key
        assert below == pytest.approx(0.10, abs=3 * standard_error(0.10)), key
        assert above == pytest.approx(0.10, abs=3 * standard_error(0.10)), key


def test_band_from_too_few_samples_says_so(client, contract_scenario):
    contract_scenario["duration_h"] = 48
    contract_scenario["uncertainty"] = {"samples": 12}
    body = client.post("/v1/forecasts", json=contract_scenario).get_json()
    band = body["summary"]["uncertainty"]
    # sqrt(0.16 / 14) = 0.1069
    assert band["samples"] == 12 and band["band_content_sd"] == pytest.approx(0.1069)
    assert band["min_stable_samples"] == 62 and band["enough_samples"] is False
    assert any("12 forecasts" in c and "at least 62" in c for c in body["cautions"])

    contract_scenario["uncertainty"] = {"samples": 64}
    body = client.post("/v1/forecasts", json=contract_scenario).get_json()
    assert body["summary"]["uncertainty"]["enough_samples"] is True
    assert not any("P10-P90" in c for c in body["cautions"])


def test_section_band_from_the_coarse_grid_matches_the_band_from_its_own_grid():
    """Sections and blocks forecast a band's samples on the coarse grid and shift them by the
    grid offset at the nominal inputs (model.uncertainty.offset_corrected): the percentiles
    must be those of the same samples forecast on the section's own grid. Measured 0.001-0.007
    C on a footing and a block (README); bound 0.05 C, a tenth of a 0.5 C logger's tolerance."""
    scenario = footing_on_ground(120.0)
    spreads, samples, seed = Spreads(1.0, 2.0, 0.05, 0.1), 12, 4
    band = uncertainty_band(scenario, spreads, samples, seed)
    assert "coarse" in band["method"]
    own = [forecast(s).summary for s in sample_scenarios(scenario, spreads, samples, seed)]
    for quantity in ("peak_temperature_c", "max_differential_c"):
        expected = percentiles(np.array([getattr(s, quantity) for s in own]))
        for level, value in expected.items():
            assert band[quantity][level] == pytest.approx(value, abs=0.05), (quantity, level)
