"""Measure what one forecast costs, to set the compute budget's constants (not a test).

    .venv/bin/python scripts/measure_budget.py [--long] [--repeat 2]

Runs 1D, 2D and 3D forecasts (the examples, some refined or lengthened) one at a time in this
process with one BLAS thread, as a gunicorn worker does, and prints for each: the cells the
solver computed and the budget's count of them, the steps taken and the budget's estimate,
the wall time and the CPU time of this process (best of ``--repeat``), the budget's estimate,
and the CPU time per estimated cell-step (the figure service.forecasting.SECONDS_PER_CELL_STEP
must cover) and per estimated step (1D: STEP_OVERHEAD_S). The solver is single-threaded, so
its CPU time is its wall time on an idle core; on a busy machine the wall time is longer, which
the budget's BUDGET_SHARE leaves room for. ``--long`` adds the pier run to 650 h.
"""

import os

for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")  # one BLAS thread, as in the service; before numpy

import argparse  # noqa: E402
import json  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from dataclasses import replace  # noqa: E402
from pathlib import Path  # noqa: E402

from model.grid import cell_count  # noqa: E402
from model.solver import ThermalSolver  # noqa: E402
from service.forecasting import (  # noqa: E402
    SECONDS_PER_CELL_STEP,
    STEP_OVERHEAD_S,
    estimated_seconds,
    estimated_steps,
    validated_scenario,
)

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def _scenario(name: str, **changes):
    payload = json.loads((EXAMPLES / f"{name}.json").read_text(encoding="utf-8"))
    _, scenario, _ = validated_scenario(payload)
    settings = changes.pop("settings", None)
    if settings:
        scenario = replace(scenario, resolution=replace(scenario.settings, **settings))
    return replace(scenario, **changes)


def cases(long: bool) -> list[tuple[str, str, object]]:
    """(dimension, label, scenario) of every run measured."""
    finer = {"surface_cell_m": 0.005, "max_cell_m": 0.05}
    out = [
        ("1D", "mat example", _scenario("mat-foundation")),
        ("1D", "mat example, 2000 h", _scenario("mat-foundation", duration_h=2000.0)),
        ("2D", "wall example", _scenario("retaining-wall-cold-weather")),
        (
            "2D",
            "wall example, cells halved",
            _scenario("retaining-wall-cold-weather", settings=finer),
        ),
        ("3D", "pier example", _scenario("pier-footing-on-rock")),
        ("3D", "pier example, 336 h", _scenario("pier-footing-on-rock", duration_h=336.0)),
    ]
    if long:
        out.append(
            ("3D", "pier example, 650 h", _scenario("pier-footing-on-rock", duration_h=650.0))
        )
    return out


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--long", action="store_true", help="add the pier run to 650 h")
    parser.add_argument("--repeat", type=int, default=1, help="runs per case (best kept)")
    parser.add_argument("--only", default="", help="run only the cases whose label has this text")
    args = parser.parse_args(argv)
    print(
        f"constants now: SECONDS_PER_CELL_STEP {SECONDS_PER_CELL_STEP:.3g} s, "
        f"STEP_OVERHEAD_S {STEP_OVERHEAD_S:.3g} s"
    )
    print(
        "| dim | case | cells (solver / budget) | steps (taken / estimated) | wall [s] | "
        "CPU [s] | estimate [s] | CPU us per cell-step (taken / estimated) | "
        "CPU ms per estimated step |"
    )
    print("| --- | --- | --- | --- | --- | --- | --- | --- | --- |")
    for dim, label, scenario in cases(args.long):
        if args.only not in f"{dim} {label}":
            continue
        wall = cpu = float("inf")
        for _ in range(args.repeat):
            start, start_cpu = time.perf_counter(), time.process_time()
            result = ThermalSolver(scenario).run()
            wall = min(wall, time.perf_counter() - start)
            cpu = min(cpu, time.process_time() - start_cpu)
        steps = estimated_steps(scenario)
        cells = cell_count(scenario)
        print(
            f"| {dim} | {label} | {result.cells} / {cells} | {result.steps} / {steps} | "
            f"{wall:.2f} | {cpu:.2f} | {estimated_seconds(scenario):.2f} | "
            f"{1e6 * cpu / (result.cells * result.steps):.2f} / "
            f"{1e6 * cpu / (cells * steps):.2f} | {1e3 * cpu / steps:.3f} |",
            flush=True,
        )
    return 0


if __name__ == "__main__":
    sys.exit(main())
