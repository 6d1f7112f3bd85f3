"""Re-forecasts of stored pours: GET /v1/pours/<id>/forecast (JSON, CSV or a chart with the
measured points) and GET /v1/pours/<id>/status (compact, for dashboards)."""

from typing import Any

from flask import Blueprint, Response, current_app, g, jsonify, request
from werkzeug.exceptions import NotFound

from service import units
from service.blueprints.forecasts import chart_size
from service.blueprints.jobs import respond_async
from service.convert import forecast_csv
from service.jobs import wants_async
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
    "pdf": "application/pdf",
}
"""Formats of a pour's forecast."""
CHART_MEDIA = {k: v for k, v in MEDIA_TYPES.items() if k in ("svg", "png", "pdf")}
"""Chart and report formats of a stored pour's forecast."""


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
    or a PDF report (or queue it as a job); SI or, with ``units=us``, US customary units (the
    PDF report is in SI)."""
    requested_units()
    fmt = choose_format(MEDIA_TYPES, "json")
    pour, readings = _pour_and_readings(pour_id)
    if fmt in CHART_MEDIA:
        chart_size()  # a bad size is refused before any computing
    if wants_async():
        fit_placement = request.args.get("fit_placement", "false").lower() == "true"
        return respond_async(
            "pour_forecast", {"pour_id": pour_id}, fit_placement=fit_placement, units=g.units
        )
    return render_pour_forecast(pour, _body(pour, readings), readings)


def render_pour_forecast(
    pour: dict[str, Any], body: dict[str, Any], readings: list[dict[str, Any]]
) -> Response:
    """A pour's forecast body as JSON, CSV, a chart with the readings or a PDF report, in the
    request's units (also the result of a pour-forecast job)."""
    us = g.units == "us"
    fmt = choose_format(MEDIA_TYPES, "json")
    if fmt == "csv":
        text = forecast_csv(body)
        return Response(units.csv_to_us(text) if us else text, mimetype="text/csv")
    if fmt in CHART_MEDIA:
        return pour_chart_response(pour, readings, body, fmt, chart_size(), us)
    return jsonify(units.body_to_us(body) if us else body)


def pour_chart_response(
    pour: dict[str, Any],
    readings: list[dict[str, Any]],
    body: dict[str, Any],
    fmt: str,
    size: str = "screen",
    us: bool = False,
) -> Response:
    """A stored pour's forecast as a chart (svg, png; in US units if ``us``) or a PDF report
    (SI), with its readings."""
    from service.charts import pour_options, render_chart

    us = us and fmt != "pdf"
    measured: dict[str, list[tuple[float, float]]] = {}
    for r in readings:
        if r["sensor"] != "air":
            temperature = r["temperature_c"] * 1.8 + 32.0 if us else r["temperature_c"]
            measured.setdefault(r["sensor"], []).append((r["hours"], temperature))
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
    shown = units.body_to_us(body) if us else body
    chart = render_chart(shown, fmt, measured=measured, units="us" if us else "si", options=options)
    return Response(chart, mimetype=CHART_MEDIA[fmt])


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
