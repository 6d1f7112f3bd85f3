"""POST /v1/plans (solve for controls) and POST /v1/comparisons (variants side by side)."""

from flask import Blueprint, Response, current_app, jsonify, request
from werkzeug.exceptions import BadRequest

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
    """Solve for each requested control on whole forecasts."""
    return jsonify(run_plan(_json_body(), current_app.config["MAX_CELL_STEPS"], request_deadline()))


@bp.post("/v1/comparisons")
def create_comparison() -> Response:
    """Forecast a base scenario and its variants; one summary row each, JSON or CSV."""
    body = run_comparison(_json_body(), current_app.config["MAX_CELL_STEPS"], request_deadline())
    wants_csv = request.args.get("format") == "csv" or (
        request.accept_mimetypes.best_match(["application/json", "text/csv"]) == "text/csv"
        and request.accept_mimetypes["text/csv"] > request.accept_mimetypes["application/json"]
    )
    if wants_csv:
        return Response(comparison_csv(body), mimetype="text/csv")
    return jsonify(body)
