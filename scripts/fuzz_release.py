"""Release check: the contract fuzzing of tests/test_fuzz_contract.py with many more examples.

    .venv/bin/python scripts/fuzz_release.py [--examples 500] [--expensive 100] [--seed N]

Every documented operation gets ``--examples`` valid and half as many invalid requests
(``--expensive`` for the operations that run forecasts); each response must not be a 5xx and
must match the documented status codes, content types and schemas. Prints one line per
operation and mode and a summary; exit 1 when any check failed. Without ``--seed`` the run is
derandomized (repeatable); with it hypothesis explores from that seed.
"""

import argparse
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path[:0] = [str(ROOT), str(ROOT / "tests")]

from hypothesis import seed as hypothesis_seed  # noqa: E402
from schemathesis import GenerationMode  # noqa: E402
from test_fuzz_contract import (  # noqa: E402
    NOTHING_TO_NEGATE,
    examples_for,
    make_fuzzed,
    operation_id,
    operation_runner,
    operations,
)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--examples", type=int, default=500, help="per cheap operation")
    parser.add_argument("--expensive", type=int, default=100, help="per forecasting operation")
    parser.add_argument("--seed", type=int, default=None, help="explore from this seed")
    args = parser.parse_args()
    table = {"cheap": args.examples, "expensive": args.expensive}
    with tempfile.TemporaryDirectory() as tmp:
        fuzzed = make_fuzzed(str(Path(tmp) / "pours.sqlite3"))
        failures: list[tuple[str, str]] = []
        runs = 0
        started = time.monotonic()
        for operation in operations(fuzzed.schema):
            op_id = operation_id(operation)
            for mode in (GenerationMode.POSITIVE, GenerationMode.NEGATIVE):
                if mode is GenerationMode.NEGATIVE and op_id in NOTHING_TO_NEGATE:
                    continue
                n = examples_for(op_id, mode, table)
                counted: list[int] = []
                t0 = time.monotonic()
                try:
                    run = operation_runner(
                        fuzzed,
                        operation,
                        mode,
                        n,
                        on_case=lambda c, r, counted=counted: counted.append(1),
                        derandomize=args.seed is None,
                    )
                    if args.seed is not None:
                        run = hypothesis_seed(args.seed)(run)
                    run()
                    outcome = "ok"
                except Exception as error:  # report every failure, keep going
                    outcome = "FAILED"
                    failures.append((f"{operation.label} [{mode.value}]", str(error)))
                runs += 1
                print(
                    f"{outcome:6} {operation.label:40} {mode.value:8} "
                    f"{len(counted):5} requests passed  {time.monotonic() - t0:6.1f} s",
                    flush=True,
                )
        print(
            f"\n{runs} operation/mode runs, {len(failures)} failed, "
            f"{time.monotonic() - started:.0f} s"
        )
        for label, message in failures:
            print(f"\n--- {label}\n{message}")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
