"""/v1/forecasts: POST a JSON scenario, or GET flat query parameters (spreadsheet web query).

Responses: JSON by default; the series as CSV, a chart as SVG or PNG (``?size=screen|a4``), or
a printable PDF report, by the Accept header or ``?format=``; one summary number as text/plain
with ``?value=`` on GET; US customary units with ``?units=us`` (the PDF report is in SI units).
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
from service.negotiation import choose_format, requested_units
from service.schemas import ScenarioIn
from service.spreadsheet import SpreadsheetQueryIn

bp = Blueprint("forecasts", __name__)

MEDIA_TYPES = {
    "json": "application/json",
    "csv": "text/csv",
    "svg": "image/svg+xml",
    "png": "image/png",
    "pdf": "application/pdf",
}
SHAPE_DIMENSIONS = {
    "slab": ("thickness_m",),
    "section": ("width_m", "height_m"),
    "block": ("length_m", "width_m", "height_m"),
}
CONTROL_PARAMETERS = ("units", "format", "value", "size")
CHART_SIZES = ("screen", "a4")
PLAIN = {"text": "text/plain"}
"""What ``?value=`` answers."""


@bp.before_request
def _units() -> None:
    requested_units()  # sets g.units
    chart_size()  # a bad size is refused before any computing


def _caution_header(body: dict[str, Any] | None = None) -> dict[str, str]:
    """Formats without room for the cautions and assumptions carry the first caution, and the
    fields whose defaults were assumed (details in the JSON form), as headers, in the units of
    the response."""
    caution = CAUTIONS[0]
    us = g.units == "us"
    if us:
        from service.units import text_to_us

        caution = text_to_us(caution)
    headers = {"Pourheat-Caution": caution}
    if body is not None:
        names = [a["field"] for a in body.get("assumptions", [])]
        if us:
            from service.units import field_path_to_us

            names = [field_path_to_us(n) for n in names]
        headers["Pourheat-Assumptions"] = ", ".join(names)
    return headers


def chart_size() -> str:
    """The ``size`` query parameter of a chart (``screen`` by default), or a 422 naming it."""
    size = request.args.get("size", "screen")
    if size not in CHART_SIZES:
        raise InvalidScenarioError(
            [{"field": "size", "message": f"expected one of {list(CHART_SIZES)}"}]
        )
    return size


def render_forecast(body: dict[str, Any], fmt: str, scenario_in: ScenarioIn) -> Response:
    """The forecast body of ``scenario_in`` in the requested format and units (also the result
    of a forecast job)."""
    us = g.units == "us"
    if fmt in ("svg", "png", "pdf"):
        try:
            from service.charts import ChartOptions, removal_marks
        except ImportError as error:  # the optional [plot] extra is not installed
            raise NotAcceptable("charts need matplotlib: install pourheat[plot]") from error
        options = ChartOptions(
            title=scenario_in.name,
            removals=removal_marks(scenario_in.model_dump()),
            size=chart_size(),
        )
    if fmt == "pdf":
        from service.report import render_report

        return Response(
            render_report(scenario_in, body, options=options),
            mimetype=MEDIA_TYPES[fmt],
            headers={"Content-Disposition": 'inline; filename="forecast.pdf"'},
        )
    if fmt == "csv":
        text = forecast_csv(body)
        if us:
            from service.units import csv_to_us

            text = csv_to_us(text)
        return Response(text, mimetype="text/csv", headers=_caution_header(body))
    shown = body
    if us:
        from service.units import body_to_us

        shown = body_to_us(body)
    if fmt == "json":
        return jsonify(shown)
    from service.charts import render_chart

    return Response(
        render_chart(shown, fmt, units=g.units, options=options),
        mimetype=MEDIA_TYPES[fmt],
        headers=_caution_header(body),
    )


def _to_si(payload: Any) -> Any:
    if g.units != "us":
        return payload
    from service.units import request_to_si

    return request_to_si(payload)


@bp.post("/v1/forecasts")
def create_forecast() -> Response:
    """Run a forecast for the posted scenario (or queue it as a job)."""
    fmt = choose_format(MEDIA_TYPES, "json")
    payload = request.get_json(silent=True)
    if payload is None:
        raise BadRequest("the body must be a JSON object (Content-Type: application/json)")
    if wants_async():
        return respond_async("forecast", _to_si(payload), units=g.units)
    scenario_in, body = run_forecast(
        _to_si(payload), current_app.config["MAX_CELL_STEPS"], request_deadline()
    )
    return render_forecast(body, fmt, scenario_in)


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
    """Spreadsheet web query: the series as CSV (whatever a spreadsheet's ``Accept`` says),
    another format only when asked for explicitly, or ``value=<summary field>`` as text/plain."""
    value = request.args.get("value")
    if value is None:
        fmt = choose_format(MEDIA_TYPES, "csv")
    else:
        fmt = choose_format(PLAIN, "text", allow_param=False)
    query = SpreadsheetQueryIn.model_validate(_to_si(_query_values()))
    missing = [n for n in SHAPE_DIMENSIONS[query.shape] if getattr(query, n) is None]
    if missing:
        raise InvalidScenarioError(
            [{"field": n, "message": f"required for shape {query.shape}"} for n in missing]
        )
    scenario_in, body = run_forecast(
        query.scenario_payload(), current_app.config["MAX_CELL_STEPS"], request_deadline()
    )
    if value is None:
        return render_forecast(body, fmt, scenario_in)
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
