"""Background job runners inside each web process.

Each web process (each gunicorn worker) starts ``JOB_WORKERS`` runner threads (default 1; 0
for an instance that only answers requests). A runner claims a job from the store under a
lease (service/jobs.py), so several processes and instances share one queue, and runs it in a
process of its own, forked from a single-threaded fork server that has the service imported
(``forkserver``: no locks or threads inherited from the web process, no start-up cost), so the
computation neither holds the web process's interpreter lock nor blocks its request
handling, and can be stopped outright. While it runs the runner renews the lease every second;
it stops the process (its whole process group, so also the processes it forked for parallel
forecasts) when the job is cancelled or runs past its time cap plus :data:`GRACE_S`. The result
or problem comes back through a pipe and is stored by the runner, only while it still holds
the lease.
"""

import json
import logging
import multiprocessing
import os
import signal
import socket
import threading
import time
import traceback
import uuid
from typing import Any

from flask import Flask
from pydantic import ValidationError
from werkzeug.exceptions import HTTPException

from model.solver import DeadlineExceededError
from service import jobs, progress, store
from service.errors import InvalidScenarioError, validation_errors
from service.limits import _positive_number as positive_number

log = logging.getLogger(__name__)

POLL_S = 1.0
"""How often an idle runner looks for a queued job [s]."""
RENEW_S = 1.0
"""How often a busy runner renews its lease and looks for a cancellation [s]."""
HOUSEKEEPING_S = 60.0
"""How often expired results are dropped [s]."""
GRACE_S = 30.0
"""A job still running this long past its time cap is killed [s]."""
SETTINGS = ("JOB_MAX_CELL_STEPS", "JOB_TIMEOUT_S")
PRELOAD = ["service.job_runner", "service.forecasting", "service.planning", "service.monitoring"]
"""Modules the fork server imports once, so that each job's process starts at once."""
BLAS_THREADS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")
"""One BLAS thread in job processes: set before the fork server imports numpy."""


def _problem(status: int, title: str, detail: str, errors: list | None = None) -> dict[str, Any]:
    body: dict[str, Any] = {"type": "about:blank", "title": title, "status": status}
    body["detail"] = detail
    if errors is not None:
        body["errors"] = errors
    return body


def problem_of(error: BaseException) -> dict[str, Any]:
    """The problem details the synchronous endpoint would have answered for ``error``."""
    if isinstance(error, ValidationError):
        errors = validation_errors(error)
        return _problem(422, "Invalid scenario", f"{len(errors)} field(s) are invalid", errors)
    if isinstance(error, InvalidScenarioError):
        return _problem(422, "Invalid scenario", "problem(s) in the scenario", error.errors)
    if isinstance(error, DeadlineExceededError):
        return _problem(
            503,
            "Computation took too long",
            f"{error}; the job's time cap is POURHEAT_JOB_TIMEOUT_S; coarsen the scenario's "
            "resolution or shorten duration_h",
        )
    if isinstance(error, HTTPException):
        return _problem(error.code or 500, error.name, error.description or "")
    return _problem(500, "Internal Server Error", "unexpected error; it has been logged")


def _child(writer: Any, database: str, job: dict[str, Any], settings: dict[str, Any]) -> None:
    """Entry point of a job's process: run it and send back ("done", body) or ("failed",
    problem)."""
    os.setpgrp()  # one process group with the workers it forks, so all can be stopped at once
    progress.report_to(database, job["id"])
    try:  # the body as JSON text, so that a body JSON cannot hold fails here, as a 500
        body = jobs.execute(job["kind"], job["request"], database, settings)
        outcome: tuple[str, Any] = ("done", json.dumps(body))
    except Exception as error:  # every failure becomes the job's problem details
        if problem_of(error)["status"] == 500:
            traceback.print_exc()
        outcome = ("failed", problem_of(error))
    writer.send(outcome)
    writer.close()


def _ready() -> None:
    """An empty job process (see :meth:`JobRunner._loop`)."""


def _kill(process: Any) -> None:
    try:
        os.killpg(process.pid, signal.SIGKILL)
    except (ProcessLookupError, PermissionError):
        process.kill()
    process.join(5)


class JobRunner:
    """The runner threads of one web process."""

    def __init__(self, config: dict[str, Any]) -> None:
        self.database = str(config["DATABASE"])
        self.settings = {k: config[k] for k in SETTINGS}
        self.lease_s = float(config["JOB_LEASE_S"])
        self.ttl_s = float(config["JOB_RESULT_TTL_S"])
        self.timeout_s = float(config["JOB_TIMEOUT_S"])
        self.owner = f"{socket.gethostname()}:{os.getpid()}:{uuid.uuid4().hex[:8]}"
        self._stop = threading.Event()
        self._threads = [
            threading.Thread(target=self._loop, name=f"pourheat-jobs-{i}", daemon=True)
            for i in range(int(config["JOB_WORKERS"]))
        ]

    def start(self) -> None:
        for thread in self._threads:
            thread.start()

    def stop(self) -> None:
        """Stop claiming jobs and wait for the runners (a running job is stopped too)."""
        self._stop.set()
        for thread in self._threads:
            thread.join(10)

    def _loop(self) -> None:
        # the fork server imports the service (seconds on a busy machine) before this runner
        # claims a job, so that a job's process starts at once and its lease is renewed from
        # the start: one empty process started and joined waits for that
        for name in BLAS_THREADS:  # as in the web workers (deploy/gunicorn.conf.py)
            os.environ.setdefault(name, "1")
        multiprocessing.set_forkserver_preload(PRELOAD)
        try:
            warm_up = multiprocessing.get_context("forkserver").Process(target=_ready)
            warm_up.start()
            warm_up.join()
        except Exception:  # jobs will fail to start, each with its reason; requests go on
            log.exception("job runner: the fork server did not start")
        db = None
        next_housekeeping = 0.0
        while not self._stop.is_set():
            try:
                if db is None:
                    db = store.connect(self.database)
                if time.monotonic() > next_housekeeping:
                    jobs.expire_jobs(db)
                    next_housekeeping = time.monotonic() + HOUSEKEEPING_S
                job = jobs.claim_job(db, self.owner, self.lease_s, self.ttl_s)
                if job is None:
                    self._stop.wait(POLL_S)
                    continue
                self._run(db, job)
            except Exception:  # a lost database must not end the runner: retry after a pause
                log.exception("job runner")
                if db is not None:
                    try:
                        db.close()
                    except Exception:
                        log.exception("closing the job runner's connection")
                db = None
                self._stop.wait(5 * POLL_S)
        if db is not None:
            db.close()

    def _run(self, db: Any, job: dict[str, Any]) -> None:
        context = multiprocessing.get_context("forkserver")
        reader, writer = context.Pipe(duplex=False)
        process = context.Process(
            target=_child, args=(writer, self.database, job, self.settings), daemon=False
        )
        process.start()
        writer.close()
        hard_cap = time.monotonic() + self.timeout_s + GRACE_S
        outcome: tuple[str, Any] | None = None
        try:
            while outcome is None:
                if reader.poll(RENEW_S):
                    try:
                        outcome = reader.recv()
                    except EOFError:  # the process died before answering
                        outcome = ("failed", self._died(process))
                    break
                if not process.is_alive():
                    outcome = ("failed", self._died(process))
                    break
                if self._stop.is_set() or not jobs.renew_lease(
                    db, job["id"], self.owner, self.lease_s
                ):
                    return  # cancelled (or this process is stopping): the lease says so
                if time.monotonic() > hard_cap:
                    outcome = (
                        "failed",
                        _problem(
                            503,
                            "Computation took too long",
                            f"stopped after {self.timeout_s + GRACE_S:g} s "
                            "(POURHEAT_JOB_TIMEOUT_S plus a grace period)",
                        ),
                    )
        finally:
            if process.is_alive():
                _kill(process)
            process.join(5)
            reader.close()
        state, body = outcome
        jobs.finish_job(
            db,
            job["id"],
            self.owner,
            body if state == "done" else None,
            body if state == "failed" else None,
            self.ttl_s,
        )

    @staticmethod
    def _died(process: Any) -> dict[str, Any]:
        process.join(5)
        return _problem(
            500,
            "Job process ended",
            f"the job's process ended without an answer (exit code {process.exitcode}); "
            "it may have run out of memory",
        )


def ensure_runner(app: Flask) -> JobRunner | None:
    """Start this app's runners (once per process) unless ``JOB_WORKERS`` is 0."""
    runner = app.extensions.get("pourheat_jobs")
    if runner is None and int(app.config["JOB_WORKERS"]) > 0:
        runner = JobRunner(app.config)
        app.extensions["pourheat_jobs"] = runner
        runner.start()
    return runner


def init_app(app: Flask) -> None:
    """Check the job settings (ValueError at start-up naming the bad one) and start the runners,
    except under test, where the first job started starts them (:func:`ensure_runner`)."""
    config = app.config
    for key in ("JOB_MAX_CELL_STEPS", "JOB_TIMEOUT_S", "JOB_RESULT_TTL_S", "JOB_LEASE_S"):
        config[key] = positive_number(config[key], f"{key} (POURHEAT_{key})")
    workers = config["JOB_WORKERS"]
    if isinstance(workers, bool) or not isinstance(workers, int) or workers < 0:
        raise ValueError(f"JOB_WORKERS (POURHEAT_JOB_WORKERS) must be an integer >= 0: {workers!r}")
    if not app.testing:
        ensure_runner(app)
