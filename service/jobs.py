"""Asynchronous jobs: compute requests run in the background, kept in the store's ``jobs`` table.

A compute request sent with ``Prefer: respond-async`` (RFC 7240) is checked as the synchronous
call would check it, stored as a queued job and answered 202 with its ``Location``. Runners
(service/job_runner.py, in every web process) claim queued jobs under a lease, run them through
:func:`execute`, which calls the same service functions as the synchronous endpoints with the
jobs' own compute budget and time cap, and store the body the synchronous call would have
given, or its problem details.

States: ``queued`` -> ``running`` -> ``done`` | ``failed`` | ``cancelled``. A running job whose
runner stops renewing its lease (the web process was killed or restarted) is claimed again when
the lease expires, up to :data:`MAX_ATTEMPTS` times in all, then marked failed with the reason.
Results (and the request) are kept for ``JOB_RESULT_TTL_S`` after the job ends, the job's
record for :data:`RECORD_KEEP_S` more.
"""

import json
import uuid
from datetime import UTC, datetime, timedelta
from typing import Any

from flask import request
from werkzeug.exceptions import NotFound

from service import store
from service.store import Database

KINDS = ("forecast", "plan", "comparison", "pour_forecast")
ACTIVE = ("queued", "running")
MAX_ATTEMPTS = 2
"""A job is started at most this many times (once more after its runner died)."""
RECORD_KEEP_S = 7 * 24 * 3600.0
"""How long a job's record (state, timings, no result) outlives its result [s]."""
DEFAULT_JOB_WORKERS = 1
DEFAULT_JOB_MAX_CELL_STEPS = 400_000_000
"""Compute budget of one job's forecast (10x the synchronous one; POURHEAT_JOB_MAX_CELL_STEPS)."""
DEFAULT_JOB_TIMEOUT_S = 1800.0
DEFAULT_JOB_RESULT_TTL_S = 86400.0
DEFAULT_JOB_LEASE_S = 30.0


def wants_async() -> bool:
    """Whether the request has ``Prefer: respond-async`` (RFC 7240; other preferences and
    parameters are ignored)."""
    for header in request.headers.getlist("Prefer"):
        for preference in header.split(","):
            name = preference.split(";", 1)[0].split("=", 1)[0].strip().lower()
            if name == "respond-async":
                return True
    return False


def _now() -> datetime:
    return datetime.now(UTC)


def _text(moment: datetime) -> str:
    return store.stored_time(moment)


def create_job(
    db: Database, kind: str, payload: Any, options: dict[str, Any], forecasts_total: int | None
) -> str:
    """Queue a job; returns its id (128 random bits, not guessable)."""
    job_id = uuid.uuid4().hex
    with db.transaction():
        db.run(
            "INSERT INTO jobs (id, kind, state, request, created_at, forecasts_total)"
            " VALUES (?, ?, 'queued', ?, ?, ?)",
            (
                job_id,
                kind,
                json.dumps({"payload": payload, "options": options}),
                _text(_now()),
                forecasts_total,
            ),
        )
    return job_id


def get_job(db: Database, job_id: str) -> dict[str, Any] | None:
    """The job's row with ``request``, ``result`` and ``error`` decoded, or None."""
    row = db.one("SELECT * FROM jobs WHERE id = ?", (job_id,))
    if row is None:
        return None
    job = dict(row)  # sqlite3.Row and psycopg dict rows alike
    for key in ("request", "result", "error"):
        job[key] = json.loads(job[key]) if job[key] is not None else None
    return job


def cancel_job(db: Database, job_id: str, ttl_s: float) -> int:
    """Cancel a queued or running job (its runner stops it within a second or two); returns the
    number of jobs changed (0 if it had ended already)."""
    now = _now()
    with db.transaction():
        return db.run(
            "UPDATE jobs SET state = 'cancelled', finished_at = ?, expires_at = ?,"
            " lease_owner = NULL, lease_expires_at = NULL"
            " WHERE id = ? AND state IN ('queued', 'running')",
            (_text(now), _text(now + timedelta(seconds=ttl_s)), job_id),
        )


def delete_job(db: Database, job_id: str) -> int:
    """Delete an ended job and its result; returns the number of jobs deleted."""
    with db.transaction():
        return db.run(
            "DELETE FROM jobs WHERE id = ? AND state NOT IN ('queued', 'running')", (job_id,)
        )


def _abandoned_problem(attempts: int) -> str:
    return json.dumps(
        {
            "type": "about:blank",
            "title": "Job abandoned",
            "status": 503,
            "detail": f"the process running this job stopped {attempts} times before it "
            "finished (the web process was restarted or killed); send the request again",
        }
    )


def claim_job(db: Database, owner: str, lease_s: float, ttl_s: float) -> dict[str, Any] | None:
    """Take the oldest queued job, or a running one whose lease expired, for ``owner`` under a
    lease of ``lease_s``; None if there is none. Jobs abandoned :data:`MAX_ATTEMPTS` times are
    marked failed instead. PostgreSQL skips rows other runners hold (``FOR UPDATE SKIP
    LOCKED``); SQLite's write lock makes the claim atomic."""
    now = _text(_now())
    waiting = (
        "SELECT id, attempts FROM jobs WHERE state = 'queued'"
        " OR (state = 'running' AND lease_expires_at < ?) ORDER BY created_at LIMIT 1"
    )
    if db.one(waiting, (now,)) is None:  # the usual case: no lock taken
        return None
    lock = " FOR UPDATE SKIP LOCKED" if db.dialect == "postgresql" else ""
    with db.transaction():
        while True:
            row = db.one(waiting + lock, (now,))
            if row is None:
                return None
            if row["attempts"] < MAX_ATTEMPTS:
                break
            ended = _now()
            db.run(
                "UPDATE jobs SET state = 'failed', error = ?, finished_at = ?, expires_at = ?,"
                " lease_owner = NULL, lease_expires_at = NULL WHERE id = ?",
                (
                    _abandoned_problem(row["attempts"]),
                    _text(ended),
                    _text(ended + timedelta(seconds=ttl_s)),
                    row["id"],
                ),
            )
        started = _now()
        db.run(
            "UPDATE jobs SET state = 'running', lease_owner = ?, lease_expires_at = ?,"
            " attempts = attempts + 1, started_at = ?, forecasts_done = 0, simulated_h = NULL,"
            " horizon_h = NULL WHERE id = ?",
            (owner, _text(started + timedelta(seconds=lease_s)), _text(started), row["id"]),
        )
    return get_job(db, row["id"])


def renew_lease(db: Database, job_id: str, owner: str, lease_s: float) -> bool:
    """Extend ``owner``'s lease; False if the job is no longer running under it (cancelled)."""
    with db.transaction():
        return (
            db.run(
                "UPDATE jobs SET lease_expires_at = ?"
                " WHERE id = ? AND lease_owner = ? AND state = 'running'",
                (_text(_now() + timedelta(seconds=lease_s)), job_id, owner),
            )
            == 1
        )


def finish_job(
    db: Database,
    job_id: str,
    owner: str,
    result_json: str | None,
    error: dict[str, Any] | None,
    ttl_s: float,
) -> bool:
    """Store the result (JSON text; state done) or the problem (state failed) of ``owner``'s
    job; False if it was cancelled meanwhile (the outcome is then dropped)."""
    now = _now()
    with db.transaction():
        changed = db.run(
            "UPDATE jobs SET state = ?, result = ?, error = ?, finished_at = ?, expires_at = ?,"
            " lease_owner = NULL, lease_expires_at = NULL"
            " WHERE id = ? AND lease_owner = ? AND state = 'running'",
            (
                "done" if error is None else "failed",
                result_json,
                None if error is None else json.dumps(error),
                _text(now),
                _text(now + timedelta(seconds=ttl_s)),
                job_id,
                owner,
            ),
        )
    return changed == 1


def expire_jobs(db: Database) -> None:
    """Drop the results and requests of jobs past their expiry, and the records of jobs
    :data:`RECORD_KEEP_S` past it."""
    now = _now()
    with db.transaction():
        db.run(
            "UPDATE jobs SET result = NULL, request = NULL"
            " WHERE expires_at < ? AND (result IS NOT NULL OR request IS NOT NULL)",
            (_text(now),),
        )
        db.run(
            "DELETE FROM jobs WHERE expires_at < ?",
            (_text(now - timedelta(seconds=RECORD_KEEP_S)),),
        )


def execute(kind: str, job_request: dict[str, Any], database: str, settings: dict[str, Any]) -> Any:
    """Run a job's computation: the service function its synchronous endpoint calls, with the
    jobs' compute budget (``JOB_MAX_CELL_STEPS``) and time cap (``JOB_TIMEOUT_S``). This is the
    one place a job meets the computation, so another executor can take its place."""
    import time

    from service.forecasting import run_forecast
    from service.monitoring import pour_forecast
    from service.planning import run_comparison, run_plan

    payload, options = job_request["payload"], job_request["options"]
    budget = float(settings["JOB_MAX_CELL_STEPS"])
    deadline = time.monotonic() + float(settings["JOB_TIMEOUT_S"])
    if kind == "forecast":
        return run_forecast(payload, budget, deadline)[1]
    if kind == "plan":
        return run_plan(payload, budget, deadline)
    if kind == "comparison":
        return run_comparison(payload, budget, deadline)
    db = store.connect(database)
    try:
        pour = store.get_pour(db, payload["pour_id"])
        if pour is None:
            raise NotFound(f"no pour {payload['pour_id']!r}")
        readings = store.readings_for(db, payload["pour_id"])
    finally:
        db.close()
    return pour_forecast(pour, readings, budget, options.get("fit_placement", False), deadline)


def forecasts_total(kind: str, payload: Any, budget: float) -> int | None:
    """Check a job's request as its synchronous endpoint would, before queueing it (raising
    the same errors: a 422 naming the field), and say how many whole forecasts it will run
    (None when a search decides: plans, calibrated pour forecasts)."""
    from service.forecasting import check_budget, validated_scenario
    from service.schemas import ComparisonIn, PlanIn, UncertainScenarioIn

    if kind == "forecast":
        scenario_in, scenario, _ = validated_scenario(payload, UncertainScenarioIn)
        check_budget(scenario, budget)
        band = scenario_in.uncertainty  # type: ignore[attr-defined]
        if band is None:
            return 1
        check_budget(scenario, budget, band.samples, "uncertainty.samples")
        return 2 if scenario.element.shape == "slab" else 1 + band.samples
    if kind == "plan":
        PlanIn.model_validate(payload)
        return None
    if kind == "comparison":
        return 1 + len(ComparisonIn.model_validate(payload).variants)
    return None
