"""POST /v1/plans (solve for controls) and POST /v1/comparisons (variants side by side)."""

from flask import Blueprint, Response, current_app, jsonify, request
from werkzeug.exceptions import BadRequest

from service import units
from service.limits import request_deadline
from service.negotiation import choose_format, requested_units
from service.planning import comparison_csv, run_comparison, run_plan

bp = Blueprint("plans", __name__)


def _json_body() -> object:
    payload = request.get_json(silent=True)
    if payload is None:
        raise BadRequest("the body must be a JSON object (Content-Type: application/json)")
    return payload


@bp.post("/v1/plans")
def create_plan() -> Response:
    """Solve for each requested control on whole forecasts (SI units only: ``units=us`` is a
    422)."""
    requested_units(us_offered=False)
    choose_format({"json": "application/json"}, "json")
    return jsonify(run_plan(_json_body(), current_app.config["MAX_CELL_STEPS"], request_deadline()))


@bp.post("/v1/comparisons")
def create_comparison() -> Response:
    """Forecast a base scenario and its variants; one summary row each, JSON or CSV; with
    ``units=us`` in and out in US customary units."""
    us = requested_units() == "us"
    fmt = choose_format({"json": "application/json", "csv": "text/csv"}, "json")
    payload = _json_body()
    if us:
        payload = units.request_to_si(payload)
    body = run_comparison(payload, current_app.config["MAX_CELL_STEPS"], request_deadline())
    if fmt == "csv":
        text = comparison_csv(body)
        return Response(units.csv_to_us(text) if us else text, mimetype="text/csv")
    return jsonify(units.body_to_us(body) if us else body)
