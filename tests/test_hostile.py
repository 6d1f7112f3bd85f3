"""The hostile-client script (scripts/hostile.py) against gunicorn as `make serve` runs it:
chunked and oversized bodies, slow clients, formula injection, bad input, the access log,
fail-closed settings and the forecast wall-clock cap under the gevent worker. The script starts
its own servers on free 127.0.0.1 ports with temporary databases and bounds every wait."""

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
CHECKS = (
    "chunked",
    "slow clients",
    "injection",
    "bad input",
    "query token",
    "nosniff",
    "access log",
    "fail closed",
    "forecast cap",
)
BOUND_S = 240
"""The script takes about 30 s; this bounds a hang."""


def test_hostile_clients_against_gunicorn():
    run = subprocess.run(
        [sys.executable, "scripts/hostile.py"],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=BOUND_S,
        stdin=subprocess.DEVNULL,
    )
    report = run.stdout + run.stderr
    assert run.returncode == 0, report
    verdicts = {
        line[:16].strip(): line[16:].split()[0]
        for line in run.stdout.splitlines()
        if line[:16].strip() in CHECKS
    }
    assert verdicts == dict.fromkeys(CHECKS, "ok"), report
