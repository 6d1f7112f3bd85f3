"""/v1/forecasts: POST a JSON scenario, or GET flat query parameters (spreadsheet web query).

Responses: JSON by default; the series as CSV, or a chart as SVG or PNG, by the Accept header or
``?format=``; one summary number as text/plain with ``?value=`` on GET; US customary units with
``?units=us``.
"""

from typing import Any

from flask import Blueprint, Response, current_app, g, jsonify, request
from werkzeug.exceptions import BadRequest, NotAcceptable

from service.blueprints.jobs import respond_async
from service.convert import CAUTIONS, forecast_csv
from service.errors import InvalidScenarioError
from service.forecasting import run_forecast
from service.jobs import wants_async
from service.limits import request_deadline
from service.spreadsheet import SpreadsheetQueryIn

bp = Blueprint("forecasts", __name__)

MEDIA_TYPES = {
    "json": "application/json",
    "csv": "text/csv",
    "svg": "image/svg+xml",
    "png": "image/png",
}
SHAPE_DIMENSIONS = {
    "slab": ("thickness_m",),
    "section": ("width_m", "height_m"),
    "block": ("length_m", "width_m", "height_m"),
}
CONTROL_PARAMETERS = ("units", "format", "value")


@bp.before_request
def _units() -> None:
    units = request.args.get("units", "si")
    if units not in ("si", "us"):
        raise InvalidScenarioError([{"field": "units", "message": "expected 'si' or 'us'"}])
    g.units = units


def forecast_format(default: str) -> str:
    fmt = request.args.get("format")
    if fmt is not None:
        if fmt not in MEDIA_TYPES:
            raise InvalidScenarioError(
                [{"field": "format", "message": f"expected one of {sorted(MEDIA_TYPES)}"}]
            )
        return fmt
    best = request.accept_mimetypes.best_match(list(MEDIA_TYPES.values()), MEDIA_TYPES[default])
    if best is None:
        raise NotAcceptable(f"offered: {', '.join(MEDIA_TYPES.values())}")
    return next(name for name, media in MEDIA_TYPES.items() if media == best)


def _caution_header() -> dict[str, str]:
    """Formats without room for the cautions carry the first one as a header."""
    return {"Pourheat-Caution": CAUTIONS[0]}


def render_forecast(body: dict[str, Any], fmt: str) -> Response:
    """The forecast body in the requested format and units."""
    us = g.units == "us"
    if fmt == "csv":
        text = forecast_csv(body)
        if us:
            from service.units import csv_to_us

            text = csv_to_us(text)
        return Response(text, mimetype="text/csv", headers=_caution_header())
    shown = body
    if us:
        from service.units import body_to_us

        shown = body_to_us(body)
    if fmt == "json":
        return jsonify(shown)
    try:
        from service.charts import render_chart
    except ImportError as error:  # the optional [plot] extra is not installed
        raise NotAcceptable("charts need matplotlib: install pourheat[plot]") from error
    return Response(
        render_chart(shown, fmt, units=g.units),
        mimetype=MEDIA_TYPES[fmt],
        headers=_caution_header(),
    )


def _to_si(payload: Any) -> Any:
    if g.units != "us":
        return payload
    from service.units import request_to_si

    return request_to_si(payload)


@bp.post("/v1/forecasts")
def create_forecast() -> Response:
    """Run a forecast for the posted scenario (or queue it as a job)."""
    fmt = forecast_format("json")
    payload = request.get_json(silent=True)
    if payload is None:
        raise BadRequest("the body must be a JSON object (Content-Type: application/json)")
    if wants_async():
        return respond_async("forecast", _to_si(payload), units=g.units)
    _, body = run_forecast(
        _to_si(payload), current_app.config["MAX_CELL_STEPS"], request_deadline()
    )
    return render_forecast(body, fmt)


def _query_values() -> dict[str, Any]:
    """Query parameters other than the controls; numbers parsed so units can be converted."""
    values: dict[str, Any] = {}
    for name, text in request.args.items():
        if name in CONTROL_PARAMETERS:
            continue
        try:
            values[name] = float(text)
        except ValueError:
            values[name] = text
    return values


@bp.get("/v1/forecasts")
def query_forecast() -> Response:
    """Spreadsheet web query: the series as CSV, or ``value=<summary field>`` as text/plain."""
    query = SpreadsheetQueryIn.model_validate(_to_si(_query_values()))
    missing = [n for n in SHAPE_DIMENSIONS[query.shape] if getattr(query, n) is None]
    if missing:
        raise InvalidScenarioError(
            [{"field": n, "message": f"required for shape {query.shape}"} for n in missing]
        )
    _, body = run_forecast(
        query.scenario_payload(), current_app.config["MAX_CELL_STEPS"], request_deadline()
    )
    value = request.args.get("value")
    if value is None:
        return render_forecast(body, forecast_format("csv"))
    summary = body["summary"]
    if g.units == "us":
        from service.units import body_to_us

        summary = body_to_us(body)["summary"]
    scalars = {k: v for k, v in summary.items() if isinstance(v, int | float)}
    if value not in scalars:
        raise InvalidScenarioError(
            [{"field": "value", "message": f"expected one of {sorted(scalars)}"}]
        )
    return Response(f"{scalars[value]}", mimetype="text/plain", headers=_caution_header())
