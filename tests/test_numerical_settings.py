"""The same numerical settings wherever the solver runs: the ``pourheat`` command line pins BLAS
to one thread as the gunicorn workers do (deploy/gunicorn.conf.py). Checked on a real CLI
process with threadpoolctl's report of the loaded BLAS libraries, not by timing."""

import json
import os
import subprocess
import sys
from pathlib import Path

from service import BLAS_THREAD_VARIABLES
from tests.conftest import CONTRACT_SCENARIO

PROJECT_ROOT = Path(__file__).resolve().parents[1]

# Runs `pourheat forecast` in this process, then prints threadpoolctl's view of the BLAS
# libraries numpy and scipy loaded, as the process ends.
PROBE = """
import atexit, json, sys
from threadpoolctl import threadpool_info
atexit.register(lambda: print("BLAS " + json.dumps(threadpool_info()), file=sys.stderr))
from service.cli import main
sys.exit(main(["forecast", sys.argv[1]]))
"""


def test_cli_process_runs_with_one_blas_thread(tmp_path):
    scenario = {**CONTRACT_SCENARIO, "duration_h": 24}
    path = tmp_path / "scenario.json"
    path.write_text(json.dumps(scenario), encoding="utf-8")
    env = {k: v for k, v in os.environ.items() if k not in BLAS_THREAD_VARIABLES}
    done = subprocess.run(
        [sys.executable, "-c", PROBE, str(path)],
        cwd=PROJECT_ROOT,
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert done.returncode == 0, done.stderr
    report = next(line for line in done.stderr.splitlines() if line.startswith("BLAS "))
    blas = [lib for lib in json.loads(report[5:]) if lib["user_api"] == "blas"]
    assert blas, "numpy's BLAS was not loaded"
    assert {lib["num_threads"] for lib in blas} == {1}, blas
