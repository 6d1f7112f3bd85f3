"""/v1/jobs: compute requests run in the background (``Prefer: respond-async``).

``GET /v1/jobs/<id>`` gives the state, progress, timings and, when done, the JSON body the
synchronous call would have given (and for a failed job its problem details);
``GET /v1/jobs/<id>/result`` gives that body in any of the synchronous call's formats
(``Accept`` or ``?format=``); ``DELETE /v1/jobs/<id>`` cancels a queued or running job, or
deletes an ended one with its result. Access follows service/auth.py: GETs are reads, DELETE
is a write.
"""

from datetime import UTC, datetime
from typing import Any

from flask import Blueprint, Response, current_app, g, jsonify, url_for
from werkzeug.exceptions import NotFound

from service import jobs, store
from service.errors import problem
from service.job_runner import ensure_runner

bp = Blueprint("jobs", __name__)

RETRY_AFTER_S = 2
"""Suggested polling interval while a job is queued or running [s]."""


def respond_async(kind: str, payload: Any, **options: Any) -> Response:
    """Check the request as the synchronous call would (422 at once if invalid, with the jobs'
    budget), queue it, and answer 202 with the job's Location (RFC 7240 respond-async)."""
    total = jobs.forecasts_total(kind, payload, float(current_app.config["JOB_MAX_CELL_STEPS"]))
    job_id = jobs.create_job(store.get_db(), kind, payload, options, total)
    ensure_runner(current_app._get_current_object())  # type: ignore[attr-defined]
    job = jobs.get_job(store.get_db(), job_id)
    assert job is not None
    response = jsonify(job_json(job))
    response.status_code = 202
    response.headers["Location"] = url_for("jobs.show_job", job_id=job_id)
    response.headers["Preference-Applied"] = "respond-async"
    response.headers["Retry-After"] = str(RETRY_AFTER_S)
    response.vary.add("Prefer")
    return response


def _time(text: str | None) -> str | None:
    return store.iso_utc(store.parse_stored(text)) if text else None


def _seconds(start: str | None, end: str | None) -> float | None:
    if start is None:
        return None
    finish = store.parse_stored(end) if end else datetime.now(UTC)
    return round((finish - store.parse_stored(start)).total_seconds(), 3)


def _expired(job: dict[str, Any]) -> bool:
    return job["expires_at"] is not None and store.parse_stored(job["expires_at"]) < datetime.now(
        UTC
    )


def _json_result(job: dict[str, Any]) -> Any:
    """The result as the synchronous JSON answer, in the units the request used."""
    result = job["result"]
    options = (job["request"] or {}).get("options", {})
    if job["kind"] == "forecast" and options.get("units") == "us":
        from service.units import body_to_us

        return body_to_us(result)
    return result


def job_json(job: dict[str, Any]) -> dict[str, Any]:
    """A job as answered by GET /v1/jobs/<id>."""
    body: dict[str, Any] = {
        "id": job["id"],
        "kind": job["kind"],
        "state": job["state"],
        "progress": {
            "forecasts_done": job["forecasts_done"],
            "forecasts_total": job["forecasts_total"],
            "simulated_h": job["simulated_h"],
            "horizon_h": job["horizon_h"],
        },
        "created_at": _time(job["created_at"]),
        "started_at": _time(job["started_at"]),
        "finished_at": _time(job["finished_at"]),
        "queued_s": _seconds(job["created_at"], job["started_at"] or job["finished_at"]),
        "run_s": _seconds(job["started_at"], job["finished_at"]),
        "attempts": job["attempts"],
        "expires_at": _time(job["expires_at"]),
        "links": {
            "self": url_for("jobs.show_job", job_id=job["id"]),
            "result": url_for("jobs.job_result", job_id=job["id"]),
        },
    }
    if job["state"] == "failed":
        body["error"] = job["error"]
    if job["state"] == "done":
        body["result_expired"] = job["result"] is None
        if job["result"] is not None:
            body["result"] = _json_result(job)
    return body


def _job_or_404(job_id: str) -> dict[str, Any]:
    job = jobs.get_job(store.get_db(), job_id)
    if job is None:
        raise NotFound(f"no job {job_id!r} (unknown, or its record has expired)")
    return job


@bp.get("/v1/jobs/<job_id>")
def show_job(job_id: str) -> Response:
    """State, progress and timings; the result (JSON) when done, the problem when failed."""
    job = _job_or_404(job_id)
    response = jsonify(job_json(job))
    if job["state"] in jobs.ACTIVE:
        response.headers["Retry-After"] = str(RETRY_AFTER_S)
    return response


@bp.get("/v1/jobs/<job_id>/result")
def job_result(job_id: str) -> Response:
    """The body the synchronous call would have given, in any of its formats; a failed job
    answers its problem details with their status."""
    job = _job_or_404(job_id)
    state = job["state"]
    if state in jobs.ACTIVE:
        response = problem(
            409, "Not Ready", f"the job is {state}; poll {url_for('.show_job', job_id=job_id)}"
        )
        response.headers["Retry-After"] = str(RETRY_AFTER_S)
        return response
    if state == "cancelled":
        return problem(409, "Cancelled", "the job was cancelled: there is no result")
    if state == "failed":
        error = job["error"]
        return problem(error["status"], error["title"], error["detail"], error.get("errors"))
    if job["result"] is None or _expired(job):
        return problem(
            410,
            "Gone",
            "the result has expired (POURHEAT_JOB_RESULT_TTL_S): send the request again",
        )
    return _render(job)


def _render(job: dict[str, Any]) -> Response:
    kind, body = job["kind"], job["result"]
    options = job["request"]["options"]
    if kind == "forecast":
        from service.blueprints.forecasts import MEDIA_TYPES, render_forecast
        from service.negotiation import choose_format
        from service.schemas import UncertainScenarioIn

        g.units = options.get("units", "si")
        scenario_in = UncertainScenarioIn.model_validate(job["request"]["payload"])
        return render_forecast(body, choose_format(MEDIA_TYPES, "json"), scenario_in)
    if kind == "comparison":
        from service.blueprints.plans import render_comparison

        g.units = options.get("units", "si")
        return render_comparison(body)
    if kind == "pour_forecast":
        from service.blueprints.monitoring import render_pour_forecast

        pour_id = job["request"]["payload"]["pour_id"]
        db = store.get_db()
        pour = store.get_pour(db, pour_id)
        if pour is None:
            raise NotFound(f"no pour {pour_id!r}")
        g.units = options.get("units", "si")
        return render_pour_forecast(pour, body, store.readings_for(db, pour_id))
    return jsonify(body)


@bp.delete("/v1/jobs/<job_id>")
def delete_job(job_id: str) -> Response:
    """Cancel a queued or running job (200 with the job); delete an ended one (204)."""
    db = store.get_db()
    _job_or_404(job_id)
    if jobs.cancel_job(db, job_id, float(current_app.config["JOB_RESULT_TTL_S"])):
        return jsonify(job_json(_job_or_404(job_id)))
    jobs.delete_job(db, job_id)
    return Response(status=204)
