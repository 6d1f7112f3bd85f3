"""Re-forecasts of stored pours: GET /v1/pours/<id>/forecast (JSON, CSV or a chart with the
measured points) and GET /v1/pours/<id>/status (compact, for dashboards)."""

from typing import Any

from flask import Blueprint, Response, current_app, jsonify, request
from werkzeug.exceptions import NotFound

from service.blueprints.jobs import respond_async
from service.convert import forecast_csv
from service.jobs import wants_async
from service.limits import request_deadline
from service.monitoring import pour_forecast, pour_status
from service.store import get_db, get_pour, readings_for, save_status

bp = Blueprint("monitoring", __name__)


def _pour_and_readings(pour_id: str) -> tuple[dict[str, Any], list[dict[str, Any]]]:
    db = get_db()
    pour = get_pour(db, pour_id)
    if pour is None:
        raise NotFound(f"no pour {pour_id!r}")
    return pour, readings_for(db, pour_id)


def _body(pour: dict[str, Any], readings: list[dict[str, Any]]) -> dict[str, Any]:
    fit_placement = request.args.get("fit_placement", "false").lower() == "true"
    return pour_forecast(
        pour, readings, current_app.config["MAX_CELL_STEPS"], fit_placement, request_deadline()
    )


@bp.get("/v1/pours/<pour_id>/forecast")
def forecast_pour(pour_id: str) -> Response:
    """Calibrate to the readings so far and forecast ahead; JSON, CSV, SVG or PNG (or queue it
    as a job)."""
    pour, readings = _pour_and_readings(pour_id)
    if wants_async():
        fit_placement = request.args.get("fit_placement", "false").lower() == "true"
        return respond_async("pour_forecast", {"pour_id": pour_id}, fit_placement=fit_placement)
    return render_pour_forecast(_body(pour, readings), readings)


def render_pour_forecast(body: dict[str, Any], readings: list[dict[str, Any]]) -> Response:
    """A pour's forecast body as JSON, CSV, or a chart with the measured points."""
    fmt = request.args.get("format", "json")
    if fmt == "csv" or request.accept_mimetypes.best == "text/csv":
        return Response(forecast_csv(body), mimetype="text/csv")
    if fmt in ("svg", "png"):
        from service.charts import render_chart

        measured: dict[str, list[tuple[float, float]]] = {}
        for r in readings:
            measured.setdefault(r["sensor"], []).append((r["hours"], r["temperature_c"]))
        media = "image/svg+xml" if fmt == "svg" else "image/png"
        return Response(render_chart(body, fmt, measured=measured), mimetype=media)
    return jsonify(body)


@bp.get("/v1/pours/<pour_id>/status")
def status(pour_id: str) -> Response:
    """Measured and forecast extremes, limit status, hours until insulation may come off."""
    pour, readings = _pour_and_readings(pour_id)
    result = pour_status(pour, readings, _body(pour, readings))
    save_status(get_db(), pour_id, result)
    return jsonify(result)
