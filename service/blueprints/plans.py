"""POST /v1/plans (solve for controls) and POST /v1/comparisons (variants side by side)."""

from flask import Blueprint, Response, current_app, g, jsonify, request
from werkzeug.exceptions import BadRequest

from service import units
from service.blueprints.jobs import respond_async
from service.jobs import wants_async
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
    """Solve for each requested control on whole forecasts (or queue it as a job); SI units
    only: ``units=us`` is a 422."""
    requested_units(us_offered=False)
    choose_format({"json": "application/json"}, "json")
    if wants_async():
        return respond_async("plan", _json_body())
    return jsonify(run_plan(_json_body(), current_app.config["MAX_CELL_STEPS"], request_deadline()))


@bp.post("/v1/comparisons")
def create_comparison() -> Response:
    """Forecast a base scenario and its variants; one summary row each, JSON or CSV (or queue
    it as a job); with ``units=us`` in and out in US customary units."""
    us = requested_units() == "us"
    choose_format(COMPARISON_MEDIA, "json")  # an unsatisfiable Accept is refused before work
    payload = _json_body()
    if us:
        payload = units.request_to_si(payload)
    if wants_async():
        return respond_async("comparison", payload, units=g.units)
    body = run_comparison(payload, current_app.config["MAX_CELL_STEPS"], request_deadline())
    return render_comparison(body)


COMPARISON_MEDIA = {"json": "application/json", "csv": "text/csv"}


def render_comparison(body: dict) -> Response:
    """A comparison body as JSON or CSV (``format=`` or Accept), in the request's units (also
    the result of a comparison job)."""
    us = g.units == "us"
    if choose_format(COMPARISON_MEDIA, "json") == "csv":
        text = comparison_csv(body)
        return Response(units.csv_to_us(text) if us else text, mimetype="text/csv")
    return jsonify(units.body_to_us(body) if us else body)
