"""Measure how far the second-round speed targets are from what this stack can do (not a test).

    .venv/bin/python scripts/measure_floors.py [--frontier]

Prints, with one BLAS thread, in this process:

- 1D: the default mat forecast and the tuned method-of-lines reference (bench ``1d``; best of 5
  in turns), and the *floor*: the same number of steps doing only the library calls no implicit
  hydration step can skip (two Arrhenius and degree-of-hydration evaluations, two residual
  products, one Jacobian, one tridiagonal factorisation and solve), with no step control,
  history, recording or summary. The target (3x the reference) is out of reach if even the
  floor is slower than a third of the reference.
- Batch: the same floor for the 1000-variant batch (one chain of 1000 copies) at the batch's
  shared step count, against the reference run once (times 1000).
- 3D: the pier example's time and the part of it spent in conjugate-gradient solves (the
  linear algebra alone, whatever the rest costs).
- ``--frontier``: the pier's accuracy against a run 1.5x finer in space and time (the bench's
  measure) at the default settings, with a 4x looser step error tolerance, and with 20 mm
  surface cells instead of 10 mm (about 3 minutes more).
"""

import os

for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")  # one BLAS thread, as in the service; before numpy

import argparse  # noqa: E402
import cProfile  # noqa: E402
import pstats  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from dataclasses import replace  # noqa: E402
from pathlib import Path  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # the bench's scenarios

import numpy as np  # noqa: E402
from scipy.linalg import lapack  # noqa: E402

from bench.__main__ import (  # noqa: E402
    SPREADS,
    best_in_turns,
    forecast_error_c,
    mat_1d,
    pier_example,
    reference_1d,
)
from model.hydration import degree_of_hydration, hydration_slope_per_h  # noqa: E402
from model.maturity import arrhenius_factor, arrhenius_factor_slope  # noqa: E402
from model.scenario import Scenario  # noqa: E402
from model.solver import forecast, forecast_batch  # noqa: E402
from model.uncertainty import sample_variations  # noqa: E402

TUNED_REFERENCE = (60, 1e-4)
"""Cells and rtol of the method-of-lines reference as the bench tuned it to 0.1 C."""


def floor_s(scenario: Scenario, cells: int, steps: int, repeat: int = 5) -> float:
    """Best time [s] of ``steps`` iterations of the unavoidable calls of one implicit step on
    ``cells`` cells with the scenario's hydration parameters."""
    hyd = scenario.concrete.hydration
    temperature = np.full(cells, scenario.placement_c)
    age_h = np.full(cells, 5.0)
    diagonal, link = np.full(cells, 4.0), np.full(cells - 1, -1.0)

    def step() -> float:
        for _ in range(2):
            factor = arrhenius_factor(temperature, hyd.activation_energy_j_mol)
            alpha = degree_of_hydration(age_h + 0.5 * factor, hyd.tau_h, hyd.beta, hyd.alpha_u)
            residual = diagonal * temperature
            residual[:-1] += link * temperature[1:]
            residual[1:] += link * temperature[:-1]
            residual -= alpha
        slope = hydration_slope_per_h(
            age_h, hyd.tau_h, hyd.beta, hyd.alpha_u
        ) * arrhenius_factor_slope(temperature, hyd.activation_energy_j_mol, factor=factor)
        d, e, _ = lapack.dpttrf(diagonal - slope, link)
        return float(np.abs(lapack.dpttrs(d, e, residual)[0]).max())

    best = float("inf")
    for _ in range(repeat):
        start = time.perf_counter()
        for _ in range(steps):
            step()
        best = min(best, time.perf_counter() - start)
    return best


def one_d() -> None:
    result = forecast(mat_1d())
    ours, reference = best_in_turns(
        [lambda: forecast(mat_1d()), lambda: reference_1d(*TUNED_REFERENCE)], 5
    )
    floor = floor_s(mat_1d(), result.cells, result.steps)
    print(
        f"1D mat, default ({result.cells} cells, {result.steps} steps): {1e3 * ours:.1f} ms; "
        f"reference {1e3 * reference:.1f} ms ({reference / ours:.2f}x); floor "
        f"{1e3 * floor:.1f} ms (at most {reference / floor:.2f}x; target 3x)"
    )
    variations = sample_variations(SPREADS, 1000, seed=1)
    start = time.perf_counter()
    batch = forecast_batch(mat_1d(), variations)
    seconds = time.perf_counter() - start
    floor = floor_s(mat_1d(), result.cells * 1000, batch.steps, repeat=2)
    print(
        f"1D batch of 1000 ({batch.steps} shared steps): {seconds:.2f} s "
        f"({1000 * reference / seconds:.0f}x the reference run 1000 times); floor {floor:.2f} s "
        f"(at most {1000 * reference / floor:.0f}x; target 100x)"
    )


def pier() -> None:
    profile = cProfile.Profile()
    start = time.perf_counter()
    result = profile.runcall(forecast, pier_example())
    total = time.perf_counter() - start
    stats = pstats.Stats(profile).stats  # type: ignore[attr-defined]
    solves = sum(
        entry[3]
        for (path, _, name), entry in stats.items()
        if name == "conjugate_gradients" and path.endswith("linear.py")
    )
    print(
        f"3D pier ({result.cells} cells, {result.steps} steps): {total:.1f} s under the "
        f"profiler, of which {solves:.1f} s in conjugate-gradient solves (target about 1 s)"
    )


def frontier() -> None:
    base = pier_example()
    truth = forecast(pier_example(1.5))
    for label, changes in (
        ("default", {}),
        ("step error tolerance x4", {"error_tolerance_c": 4 * base.settings.error_tolerance_c}),
        ("20 mm surface cells", {"surface_cell_m": 0.02}),
    ):
        scenario = replace(base, resolution=replace(base.settings, **changes))
        start = time.perf_counter()
        result = forecast(scenario)
        seconds = time.perf_counter() - start
        print(
            f"pier, {label}: {result.cells} cells, {result.steps} steps, {seconds:.1f} s, "
            f"{forecast_error_c(result, truth):.3f} C from the 1.5x finer run"
        )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--frontier", action="store_true", help="pier accuracy against settings")
    args = parser.parse_args()
    one_d()
    pier()
    if args.frontier:
        frontier()


if __name__ == "__main__":
    main()
