"""Measure how often P10-P90 uncertainty bands hold the truth (the README's figures).

    .venv/bin/python scripts/band_coverage.py [--truths 2000] [--bands 300] [--samples 32]

The contract slab of DESIGN.md (2.0 m, top R 0.5, bottom adiabatic) forecast for 96 h. The
truths: ``--truths`` scenarios drawn independently from normal distributions with the default
spreads, forecast in batches. The bands: ``--bands`` calls of the service's own
``uncertainty_band`` (seeds 0, 1, ...) with ``--samples`` forecasts each, all from the nominal
scenario. For every band it counts the fraction of truths inside, below P10 and above P90, and
prints the mean over bands with its standard error from the band-to-band spread (the truths'
own binomial error, sqrt(p(1-p)/truths), comes on top and is printed apart). Takes about a
minute with the defaults on one core.
"""

import argparse
import copy
import math
import os
import sys
from pathlib import Path

for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import numpy as np  # noqa: E402

from model.scenario import Variations  # noqa: E402
from model.solver import forecast_batch  # noqa: E402
from model.uncertainty import Spreads, band_content_sd  # noqa: E402
from service.forecasting import uncertainty_band, validated_scenario  # noqa: E402
from service.schemas import UncertainScenarioIn  # noqa: E402
from tests.conftest import CONTRACT_SCENARIO  # noqa: E402

KEYS = ("peak_temperature_c", "max_differential_c")


def true_outcomes(scenario, spreads: Spreads, truths: int, seed: int) -> dict[str, np.ndarray]:
    """Peak and maximum differential of ``truths`` independently drawn scenarios."""
    z = np.random.default_rng(seed).standard_normal((truths, 4))
    out: dict[str, list] = {key: [] for key in KEYS}
    for start in range(0, truths, 250):
        chunk = z[start : start + 250]
        batch = forecast_batch(
            scenario,
            Variations(
                placement_shift_c=chunk[:, 0] * spreads.placement_sd_c,
                air_shift_c=chunk[:, 1] * spreads.air_sd_c,
                total_heat_factor=1.0 + chunk[:, 2] * spreads.total_heat_rel_sd,
                tau_factor=1.0 + chunk[:, 3] * spreads.tau_rel_sd,
            ),
        )
        out["peak_temperature_c"].append(batch.peak_temperature_c)
        out["max_differential_c"].append(batch.max_differential_c)
    return {key: np.concatenate(values) for key, values in out.items()}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--truths", type=int, default=2000)
    parser.add_argument("--bands", type=int, default=300)
    parser.add_argument("--samples", type=int, default=32)
    parser.add_argument("--seed", type=int, default=20261202, help="seed of the truths")
    args = parser.parse_args()
    payload = {**copy.deepcopy(CONTRACT_SCENARIO), "duration_h": 96}  # the README figures
    scenario = validated_scenario(payload, UncertainScenarioIn)[1]
    spreads = Spreads()
    truth = true_outcomes(scenario, spreads, args.truths, args.seed)
    bands = [uncertainty_band(scenario, spreads, args.samples, s) for s in range(args.bands)]
    print(
        f"{args.truths} truths, {args.bands} bands of {args.samples} samples; order-statistic "
        f"sd of one band's content for independent draws: {band_content_sd(args.samples):.4f}"
    )
    for key in KEYS:
        values = np.sort(truth[key])
        low = np.array([band[key]["p10"] for band in bands])
        high = np.array([band[key]["p90"] for band in bands])
        below = np.searchsorted(values, low, "left") / values.size
        above = 1.0 - np.searchsorted(values, high, "right") / values.size
        inside = 1.0 - below - above
        binomial = math.sqrt(0.8 * 0.2 / values.size)
        print(
            f"{key}: inside {inside.mean():.4f} +- {inside.std() / math.sqrt(inside.size):.4f} "
            f"(band-to-band sd {inside.std():.4f}; truths' binomial error {binomial:.4f}), "
            f"below P10 {below.mean():.4f}, above P90 {above.mean():.4f}"
        )


if __name__ == "__main__":
    main()
