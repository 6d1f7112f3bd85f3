"""POST /v1/forecasts: a scenario in, the forecast out as JSON or CSV."""

from flask import Blueprint, Response, current_app, jsonify, request
from werkzeug.exceptions import BadRequest

from service.convert import forecast_csv
from service.forecasting import run_forecast

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
    _, body = run_forecast(payload, current_app.config["MAX_CELL_STEPS"])
    if _wants_csv():
        return Response(forecast_csv(body), mimetype="text/csv")
    return jsonify(body)
