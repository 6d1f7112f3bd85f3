"""POST /v1/plans (solve for controls) and POST /v1/comparisons (variants side by side)."""

from flask import Blueprint, Response, current_app, jsonify, request
from werkzeug.exceptions import BadRequest

from service.blueprints.jobs import respond_async
from service.jobs import wants_async
from service.limits import request_deadline
from service.planning import comparison_csv, run_comparison, run_plan

bp = Blueprint("plans", __name__)


def _json_body() -> object:
    payload = request.get_json(silent=True)
    if payload is None:
        raise BadRequest("the body must be a JSON object (Content-Type: application/json)")
    return payload


@bp.post("/v1/plans")
def create_plan() -> Response:
    """Solve for each requested control on whole forecasts (or queue it as a job)."""
    if wants_async():
        return respond_async("plan", _json_body())
    return jsonify(run_plan(_json_body(), current_app.config["MAX_CELL_STEPS"], request_deadline()))


@bp.post("/v1/comparisons")
def create_comparison() -> Response:
    """Forecast a base scenario and its variants; one summary row each, JSON or CSV (or queue
    it as a job)."""
    if wants_async():
        return respond_async("comparison", _json_body())
    body = run_comparison(_json_body(), current_app.config["MAX_CELL_STEPS"], request_deadline())
    return render_comparison(body)


def render_comparison(body: dict) -> Response:
    """A comparison body as JSON, or CSV by ``format=csv`` or an Accept that ranks it first."""
    wants_csv = request.args.get("format") == "csv" or (
        request.accept_mimetypes.best_match(["application/json", "text/csv"]) == "text/csv"
        and request.accept_mimetypes["text/csv"] > request.accept_mimetypes["application/json"]
    )
    if wants_csv:
        return Response(comparison_csv(body), mimetype="text/csv")
    return jsonify(body)
