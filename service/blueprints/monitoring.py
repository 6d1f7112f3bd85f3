"""Re-forecasts of stored pours: GET /v1/pours/<id>/forecast (JSON, CSV or a chart with the
measured points) and GET /v1/pours/<id>/status (compact, for dashboards)."""

from typing import Any

from flask import Blueprint, Response, current_app, jsonify, request
from werkzeug.exceptions import NotFound

from service import units
from service.convert import forecast_csv
from service.limits import request_deadline
from service.monitoring import pour_forecast, pour_status
from service.negotiation import choose_format, requested_units
from service.store import get_db, get_pour, readings_for, save_status

bp = Blueprint("monitoring", __name__)

MEDIA_TYPES = {
    "json": "application/json",
    "csv": "text/csv",
    "svg": "image/svg+xml",
    "png": "image/png",
}
"""Formats of a pour's forecast."""


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
    """Calibrate to the readings so far and forecast ahead; JSON, CSV, SVG or PNG; SI or, with
    ``units=us``, US customary units."""
    us = requested_units() == "us"
    fmt = choose_format(MEDIA_TYPES, "json")
    pour, readings = _pour_and_readings(pour_id)
    body = _body(pour, readings)
    if fmt == "csv":
        text = forecast_csv(body)
        return Response(units.csv_to_us(text) if us else text, mimetype="text/csv")
    shown = units.body_to_us(body) if us else body
    if fmt in ("svg", "png"):
        from service.charts import render_chart

        measured: dict[str, list[tuple[float, float]]] = {}
        for r in readings:
            temperature = r["temperature_c"] * 1.8 + 32.0 if us else r["temperature_c"]
            measured.setdefault(r["sensor"], []).append((r["hours"], temperature))
        chart = render_chart(shown, fmt, measured=measured, units="us" if us else "si")
        return Response(chart, mimetype=MEDIA_TYPES[fmt])
    return jsonify(shown)


@bp.get("/v1/pours/<pour_id>/status")
def status(pour_id: str) -> Response:
    """Measured and forecast extremes, limit status, hours until insulation may come off; SI
    or, with ``units=us``, US customary units."""
    us = requested_units() == "us"
    choose_format({"json": "application/json"}, "json", allow_param=False)
    pour, readings = _pour_and_readings(pour_id)
    result = pour_status(pour, readings, _body(pour, readings))
    save_status(get_db(), pour_id, result)
    return jsonify(units.body_to_us(result) if us else result)
