"""Re-forecasts of stored pours: GET /v1/pours/<id>/forecast (JSON, CSV or a chart with the
measured points) and GET /v1/pours/<id>/status (compact, for dashboards)."""

from typing import Any

from flask import Blueprint, Response, current_app, jsonify, request
from werkzeug.exceptions import NotFound

from service.blueprints.forecasts import chart_size
from service.convert import forecast_csv
from service.limits import request_deadline
from service.monitoring import pour_forecast, pour_status
from service.store import get_db, get_pour, readings_for, save_status

bp = Blueprint("monitoring", __name__)

CHART_MEDIA = {"svg": "image/svg+xml", "png": "image/png", "pdf": "application/pdf"}
"""Chart and report formats of a stored pour's forecast (``?format=``)."""


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
    """Calibrate to the readings so far and forecast ahead; JSON, CSV, SVG, PNG (``?size=``)
    or a PDF report."""
    pour, readings = _pour_and_readings(pour_id)
    if request.args.get("format") in CHART_MEDIA:
        chart_size()  # a bad size is refused before any computing
    body = _body(pour, readings)
    fmt = request.args.get("format", "json")
    if fmt == "csv" or request.accept_mimetypes.best == "text/csv":
        return Response(forecast_csv(body), mimetype="text/csv")
    if fmt in CHART_MEDIA:
        return pour_chart_response(pour, readings, body, fmt, chart_size())
    return jsonify(body)


def pour_chart_response(
    pour: dict[str, Any],
    readings: list[dict[str, Any]],
    body: dict[str, Any],
    fmt: str,
    size: str = "screen",
) -> Response:
    """A stored pour's forecast as a chart (svg, png) or a PDF report, with its readings."""
    from service.charts import pour_options, render_chart

    measured: dict[str, list[tuple[float, float]]] = {}
    for r in readings:
        if r["sensor"] != "air":
            measured.setdefault(r["sensor"], []).append((r["hours"], r["temperature_c"]))
    options = pour_options(pour, size)
    if fmt == "pdf":
        from service.report import render_report
        from service.schemas import ScenarioIn

        pdf = render_report(
            ScenarioIn.model_validate(pour["scenario"]), body, measured, options, pour
        )
        return Response(
            pdf,
            mimetype=CHART_MEDIA[fmt],
            headers={"Content-Disposition": f'inline; filename="pour-{pour["id"]}.pdf"'},
        )
    return Response(
        render_chart(body, fmt, measured=measured, options=options), mimetype=CHART_MEDIA[fmt]
    )


@bp.get("/v1/pours/<pour_id>/status")
def status(pour_id: str) -> Response:
    """Measured and forecast extremes, limit status, hours until insulation may come off."""
    pour, readings = _pour_and_readings(pour_id)
    result = pour_status(pour, readings, _body(pour, readings))
    save_status(get_db(), pour_id, result)
    return jsonify(result)
