"""POST /v1/forecasts: a scenario in, the forecast out as JSON or CSV."""

from flask import Blueprint, Response, jsonify, request
from werkzeug.exceptions import BadRequest

from model.solver import ConvergenceError, forecast
from service.checks import cross_field_errors
from service.convert import forecast_csv, forecast_json, scenario_from
from service.errors import InvalidScenarioError
from service.schemas import ScenarioIn

bp = Blueprint("forecasts", __name__)


def _wants_csv() -> bool:
    if request.args.get("format") == "csv":
        return True
    best = request.accept_mimetypes.best_match(["application/json", "text/csv"])
    return (
        best == "text/csv"
        and request.accept_mimetypes["text/csv"] > request.accept_mimetypes["application/json"]
    )


@bp.post("/v1/forecasts")
def create_forecast():
    """Run a forecast for the posted scenario."""
    payload = request.get_json(silent=True)
    if payload is None:
        raise BadRequest("the body must be a JSON object (Content-Type: application/json)")
    scenario_in = ScenarioIn.model_validate(payload)
    problems = cross_field_errors(scenario_in)
    if problems:
        raise InvalidScenarioError(problems)
    scenario, origin = scenario_from(scenario_in)
    try:
        result = forecast(scenario)
    except ConvergenceError as error:
        raise InvalidScenarioError(
            [
                {
                    "field": "(scenario)",
                    "message": f"{error}; try a shorter output_interval_h or milder inputs",
                }
            ]
        ) from error
    body = forecast_json(scenario_in, scenario, result, origin)
    if _wants_csv():
        return Response(forecast_csv(body), mimetype="text/csv")
    return jsonify(body)
