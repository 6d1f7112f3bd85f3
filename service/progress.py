"""Progress of the job running in this process, written to its row in the store.

A job runs in a process of its own (service/job_runner.py), which calls :func:`report_to`
once; the forecasts it runs, there or in the processes it forks for parallel work, pass
:func:`on_step` to the solver. Each process writes through its own connection: the simulated
hours of the forecast in hand at most once a second, and one more finished forecast (an atomic
increment) whenever a forecast reaches its horizon. Outside a job :func:`on_step` does nothing.

A process whose parent has gone (the web process was killed) stops at its next step, so no
job runs on unobserved after its runner died; the job is then re-claimed when its lease
expires.
"""

import os
import time
from dataclasses import dataclass, field
from typing import Any

from service import store

WRITE_INTERVAL_S = 1.0
"""Simulated hours are written at most this often per process [s]."""


@dataclass
class _Reporter:
    database: str
    job_id: str
    parent_pid: int
    pid: int = field(default_factory=os.getpid)
    db: Any = None
    last_write: float = 0.0


_reporter: _Reporter | None = None


def report_to(database: str, job_id: str) -> None:
    """Make this process (and those it forks) report the progress of job ``job_id``."""
    global _reporter
    _reporter = _Reporter(database, job_id, os.getppid())


def _connection(reporter: _Reporter) -> Any:
    if reporter.db is None:
        reporter.db = store.connect(reporter.database)
    return reporter.db


def on_step(time_h: float, horizon_h: float) -> None:
    """Solver hook: record the simulated hours, and count the forecast when it is finished."""
    reporter = _reporter
    if reporter is None:
        return
    finished = time_h >= horizon_h - 1e-9
    now = time.monotonic()
    if not finished and now - reporter.last_write < WRITE_INTERVAL_S:
        return
    if reporter.pid != os.getpid():  # a forked worker: its own connection and parent
        reporter.pid, reporter.parent_pid, reporter.db = os.getpid(), os.getppid(), None
    if os.getppid() != reporter.parent_pid:
        os._exit(1)  # the runner that started this job is gone
    reporter.last_write = now
    db = _connection(reporter)
    with db.transaction():
        db.run(
            "UPDATE jobs SET simulated_h = ?, horizon_h = ?,"
            " forecasts_done = forecasts_done + ? WHERE id = ?",
            (round(time_h, 3), horizon_h, int(finished), reporter.job_id),
        )
