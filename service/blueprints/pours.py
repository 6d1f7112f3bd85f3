"""/v1/pours: stored pours (a name, the placement time and a scenario) and their thermocouple
readings, uploaded as JSON or CSV.

Times are accepted as ISO 8601 with an offset (``Z`` or ``+hh:mm``; naive times are refused:
a site logger's local clock is ambiguous) and always answered in UTC with ``Z``, e.g.
``2025-06-01T06:00:00Z``, with fractional seconds only when the time has them. Uploads are
checked row by row: good rows are stored in one transaction before the answer, rejected rows
are reported with their 0-based index in the upload and never stored. Re-posting a reading
already stored (same sensor, same instant) with the same value is counted as a duplicate and
changes nothing; with a different value it is a conflict, reported with the stored value and
left as stored, unless the upload says ``?replace=true``, which overwrites it (the way to
correct a wrong reading).

The body is read whole before any row is looked at (service/limits.py): a body over the size
limit is refused as a whole (413), whatever its transfer encoding, and nothing of it is stored.
CSV uploads may end their lines in LF, CRLF or CR alone; a sensor cell that the service's own CSV
exports made spreadsheet-safe (``'=``, ``'+``, ``'-``, ``'@`` ...) is read back as the id.
``placed_at`` must lie between :data:`EARLIEST_PLACED_AT` and :data:`LATEST_PLACED_AHEAD` from
now.
"""

import csv
import io
import math
from datetime import UTC, datetime, timedelta
from typing import Any

from flask import Blueprint, Response, current_app, jsonify, request, url_for
from pydantic import ValidationError
from werkzeug.exceptions import BadRequest, UnsupportedMediaType

from service import store, units
from service.csvout import FORMULA_TRIGGERS, SafeCsvWriter
from service.errors import InvalidScenarioError, capped, echo, problem, validation_errors
from service.forecasting import check_budget, validated_scenario
from service.negotiation import choose_format, requested_units
from service.schemas import CONTROL_CHARACTERS

bp = Blueprint("pours", __name__)

AIR_SENSOR = "air"
"""Sensor name of a measured air temperature (any pour may log it)."""
CSV_HEADER = ["time", "sensor", "temperature_c"]
"""Columns of an uploaded CSV, in this order."""
POUR_FIELDS = ("name", "placed_at", "scenario")
NAME_MAX_CHARS = 120
MIN_TEMPERATURE_C = -50.0
MAX_TEMPERATURE_C = 100.0
EARLIEST_BEFORE_PLACEMENT = timedelta(hours=1)
"""Readings may start this long before placement (a baseline of the forms, ground or air)."""
LATEST_AFTER_NOW = timedelta(hours=24)
"""Readings may be this far ahead of the server's clock (loggers with a wrong clock or zone)."""
MEDIA_TYPES = {"json": "application/json", "csv": "text/csv"}
EARLIEST_PLACED_AT = datetime(2000, 1, 1, tzinfo=UTC)
"""Earliest accepted placement time: older records are not site monitoring (and a pour placed at
year 1 broke every later upload)."""
LATEST_PLACED_AHEAD = timedelta(days=366)
"""A pour may be stored up to a year before it is placed (planned pours)."""
MAX_CONFLICT_ROWS = 100
"""Conflicting rows listed in an upload's answer (all are counted)."""


def _invalid(title: str, errors: list[dict[str, str]]) -> Response:
    return problem(422, title, f"{len(errors)} problem(s): see errors", errors)


def _aware_time(value: Any) -> tuple[datetime | None, str]:
    """An ISO 8601 time with an offset, as an aware UTC datetime, or (None, why not)."""
    if not isinstance(value, str):
        return None, "expected an ISO 8601 time string with an offset"
    try:
        moment = datetime.fromisoformat(value.strip())
    except ValueError:
        return None, f"{echo(value)} is not an ISO 8601 time"
    if moment.tzinfo is None or moment.utcoffset() is None:
        return None, f"{echo(value)} has no UTC offset: add Z or +hh:mm"
    try:
        return moment.astimezone(UTC), ""
    except OverflowError:
        return None, f"{echo(value)} is out of range"


class PourNotFoundError(Exception):
    """No stored pour has this id."""


def _pour_or_404(pour_id: str) -> dict[str, Any]:
    pour = store.get_pour(store.get_db(), pour_id)
    if pour is None:
        raise PourNotFoundError(pour_id)
    return pour


@bp.errorhandler(PourNotFoundError)
def _not_found(error: PourNotFoundError) -> Response:
    return problem(404, "Not Found", f"no pour with id {error.args[0]!r}")


def _sensor_ids(scenario: dict[str, Any]) -> list[str]:
    return [s["id"] for s in scenario.get("sensors", []) if isinstance(s, dict) and "id" in s]


def _pour_json(pour: dict[str, Any]) -> dict[str, Any]:
    return {
        "id": pour["id"],
        "name": pour["name"],
        "placed_at": store.iso_utc(pour["placed_at"]),
        "placed_at_local": pour["placed_at_local"],
        "archived": pour["archived"],
        "created_at": store.iso_utc(pour["created_at"]),
    }


def _in_scenario(errors: list[dict[str, str]]) -> list[dict[str, str]]:
    """Scenario error fields as paths from the pour's top level."""
    return [
        {**e, "field": "scenario" if e["field"] == "(body)" else f"scenario.{e['field']}"}
        for e in errors
    ]


def _last(time: datetime | None) -> str | None:
    return store.iso_utc(time) if time is not None else None


@bp.post("/v1/pours")
def create_pour() -> Response:
    """Store a pour: {name, placed_at (ISO 8601 with offset), scenario}."""
    requested_units(us_offered=False)
    payload = request.get_json(silent=True)
    if not isinstance(payload, dict):
        raise BadRequest("the body must be a JSON object (Content-Type: application/json)")
    errors = [{"field": k, "message": "unknown field"} for k in payload if k not in POUR_FIELDS]
    errors += [{"field": k, "message": "required"} for k in POUR_FIELDS if k not in payload]
    name = payload.get("name")
    if "name" in payload:
        if not isinstance(name, str) or not name.strip():
            errors.append({"field": "name", "message": "expected a non-empty string"})
        elif len(name.strip()) > NAME_MAX_CHARS:
            errors.append({"field": "name", "message": f"at most {NAME_MAX_CHARS} characters"})
        elif CONTROL_CHARACTERS.search(name):
            errors.append(
                {
                    "field": "name",
                    "message": "control characters (tab, CR, LF, DEL, C0 and C1) are not allowed",
                }
            )
    placed_at = None
    if "placed_at" in payload:
        placed_at, why = _aware_time(payload["placed_at"])
        latest = datetime.now(UTC) + LATEST_PLACED_AHEAD
        if placed_at is not None and not EARLIEST_PLACED_AT <= placed_at <= latest:
            placed_at, why = (
                None,
                (
                    f"must lie between {store.iso_utc(EARLIEST_PLACED_AT)} and "
                    f"{LATEST_PLACED_AHEAD.days} days from now ({store.iso_utc(latest)})"
                ),
            )
        if placed_at is None:
            errors.append({"field": "placed_at", "message": why})
        else:
            placed_at = datetime.fromisoformat(payload["placed_at"].strip())  # keep its offset
    scenario = payload.get("scenario")
    if "scenario" in payload:
        try:
            _, model_scenario, _ = validated_scenario(scenario)
            # A stored pour is forecast by jobs and `pourheat refresh` as well as by requests,
            # so it is held to the jobs' budget; a request too heavy for its own cap says so.
            check_budget(model_scenario, current_app.config["JOB_MAX_CELL_STEPS"])
        except ValidationError as error:
            errors += _in_scenario(validation_errors(error))
        except InvalidScenarioError as error:
            errors += _in_scenario(error.errors)
    if errors:
        return _invalid("Invalid pour", errors)
    assert isinstance(name, str) and placed_at is not None and isinstance(scenario, dict)
    pour_id = store.create_pour(store.get_db(), name.strip(), placed_at, scenario)
    pour = store.get_pour(store.get_db(), pour_id)
    assert pour is not None
    response = jsonify(id=pour_id, name=pour["name"], placed_at=store.iso_utc(pour["placed_at"]))
    response.status_code = 201
    response.headers["Location"] = url_for(".show_pour", pour_id=pour_id)
    return response


@bp.get("/v1/pours")
def list_pours() -> Response:
    """Stored pours, latest placement first; ``?archived=true`` includes archived ones."""
    archived = request.args.get("archived", "false").lower()
    if archived not in ("true", "false"):
        return _invalid("Invalid query", [{"field": "archived", "message": "true or false"}])
    pours = store.list_pours(store.get_db(), include_archived=archived == "true")
    return jsonify(
        pours=[
            {
                **_pour_json(p),
                "readings_count": p["readings_count"],
                "last_reading_time": _last(p["last_reading_time"]),
            }
            for p in pours
        ]
    )


@bp.get("/v1/pours/<pour_id>")
def show_pour(pour_id: str) -> Response:
    """One pour with its scenario, sensor ids and a count of its readings; with ``units=us``
    the scenario and the latest status in US customary units."""
    us = requested_units() == "us"
    pour = _pour_or_404(pour_id)
    count, last = store.reading_stats(store.get_db(), pour_id)
    latest = store.latest_status(store.get_db(), pour_id)
    if us:
        latest = units.body_to_us(latest) if isinstance(latest, dict) else latest
    return jsonify(
        {
            **_pour_json(pour),
            "scenario": units.request_to_us(pour["scenario"]) if us else pour["scenario"],
            "sensors": _sensor_ids(pour["scenario"]),
            "readings_count": count,
            "last_reading_time": _last(last),
            "latest_status": latest,
            "links": {
                "status": url_for("monitoring.status", pour_id=pour_id),
                "forecast": url_for("monitoring.forecast_pour", pour_id=pour_id),
                "readings": url_for(".get_readings", pour_id=pour_id),
            },
        }
    )


@bp.delete("/v1/pours/<pour_id>")
def archive_pour(pour_id: str) -> Response:
    """Archive a pour: nothing is deleted, it stays readable and takes no new readings."""
    if not store.archive_pour(store.get_db(), pour_id):
        raise PourNotFoundError(pour_id)
    return Response(status=204)


class RefusedError(Exception):
    """A request refused as a whole (an upload of the wrong shape, header or size, a bad query),
    carrying its problem response."""

    def __init__(self, response: Response) -> None:
        super().__init__(response.status)
        self.response = response


@bp.errorhandler(RefusedError)
def _upload_error(error: RefusedError) -> Response:
    return error.response


def _too_many(limit: int) -> RefusedError:
    return RefusedError(
        problem(413, "Too Many Readings", f"at most {limit} readings per upload; split it")
    )


def _json_rows(limit: int) -> list[Any]:
    """The rows of a JSON upload, each a dict as sent (or whatever else was sent)."""
    payload = request.get_json(silent=True)
    if not isinstance(payload, dict):
        raise BadRequest('the body must be a JSON object {"readings": [...]}')
    errors = [{"field": k, "message": "unknown field"} for k in payload if k != "readings"]
    if not isinstance(payload.get("readings"), list):
        errors.append({"field": "readings", "message": "required: a list of readings"})
    if errors:
        raise RefusedError(_invalid("Invalid readings", errors))
    rows = payload["readings"]
    if len(rows) > limit:
        raise _too_many(limit)
    return rows


def _csv_rows(limit: int) -> list[Any]:
    """The rows of a CSV upload as dicts (a row with the wrong number of cells as a list)."""
    try:
        text = request.get_data().decode("utf-8-sig")
    except UnicodeDecodeError as error:
        raise BadRequest("the CSV must be UTF-8") from error
    lines = csv.reader(io.StringIO(text, newline=""))  # LF, CRLF or CR line ends
    try:
        header = [cell.strip() for cell in next(lines, [])]
    except csv.Error as error:
        raise RefusedError(
            _invalid("Invalid readings", [{"field": "header", "message": str(error)}])
        ) from None
    if header != CSV_HEADER:
        extra = [c for c in header if c not in CSV_HEADER]
        message = f"expected exactly {','.join(CSV_HEADER)}, got {','.join(header) or 'nothing'}"
        if extra:
            message += f" (unknown columns: {', '.join(extra)})"
        raise RefusedError(_invalid("Invalid readings", [{"field": "header", "message": message}]))
    rows: list[Any] = []
    while True:
        try:
            cells = next(lines, None)
        except csv.Error as error:  # a cell over csv.field_size_limit(), a stray quote ...
            problem_ = {
                "field": f"readings.{len(rows)}",
                "message": f"line {lines.line_num}: {error}",
            }
            raise RefusedError(_invalid("Invalid readings", [problem_])) from None
        if cells is None:
            break
        if not any(cell.strip() for cell in cells):
            continue  # blank line
        if len(rows) == limit:
            raise _too_many(limit)
        if len(cells) != len(CSV_HEADER):
            rows.append(cells)
        else:
            rows.append(dict(zip(CSV_HEADER, (c.strip() for c in cells), strict=True)))
    return rows


def _temperature(value: Any, from_csv: bool) -> tuple[float | None, str]:
    if from_csv and isinstance(value, str):
        try:
            value = float(value)
        except ValueError:
            return None, f"{echo(value)} is not a number"
    if isinstance(value, bool) or not isinstance(value, int | float):
        return None, "expected a number"
    value = float(value)
    if not math.isfinite(value):
        return None, "must be a finite number"
    if not MIN_TEMPERATURE_C <= value <= MAX_TEMPERATURE_C:
        return None, f"{value:g} C is outside {MIN_TEMPERATURE_C:g}..{MAX_TEMPERATURE_C:g} C"
    return value, ""


def _unescaped(cell: str) -> str:
    """A cell as written before the service's CSV exports made it spreadsheet-safe."""
    return cell[1:] if cell.startswith("'") and cell[1:].startswith(FORMULA_TRIGGERS) else cell


def _check_row(
    row: Any, sensors: set[str], earliest: datetime, latest: datetime, from_csv: bool
) -> tuple[tuple[datetime, str, float] | None, list[tuple[str, str]]]:
    """A valid (time, sensor, temperature_c) row, or the (field, message) pairs wrong with it."""
    if not isinstance(row, dict):
        shape = f"expected {len(CSV_HEADER)} cells" if from_csv else "expected an object"
        return None, [("(row)", f"{shape}: {', '.join(CSV_HEADER)}")]
    problems = [(k, "unknown field") for k in row if k not in CSV_HEADER]
    problems += [(k, "required") for k in CSV_HEADER if k not in row]
    time, sensor, temp = None, None, None
    if "time" in row:
        time, why = _aware_time(row["time"])
        if time is None:
            problems.append(("time", why))
        elif time < earliest:
            problems.append(("time", f"more than 1 h before placement ({store.iso_utc(earliest)})"))
        elif time > latest:
            problems.append(("time", "more than 24 h after the server's current time"))
    if "sensor" in row:
        sensor = row["sensor"]
        if from_csv and isinstance(sensor, str) and sensor not in sensors:
            sensor = _unescaped(sensor)
        if not isinstance(sensor, str) or sensor not in sensors:
            problems.append(("sensor", f"{echo(sensor)} is not one of the pour's sensors"))
    if "temperature_c" in row:
        temp, why = _temperature(row["temperature_c"], from_csv)
        if temp is None:
            problems.append(("temperature_c", why))
    if problems or time is None or temp is None:
        return None, problems
    return (time, sensor, temp), []


def _sensor_list(sensors: set[str], most: int = 20) -> str:
    """The sensor ids, sorted, cut to ``most`` with a count of the rest."""
    names = sorted(sensors)
    more = f" and {len(names) - most} more (GET the pour for all)" if len(names) > most else ""
    return ", ".join(names[:most]) + more


@bp.post("/v1/pours/<pour_id>/readings")
def add_readings(pour_id: str) -> Response:
    """Add readings: JSON {"readings": [{time, sensor, temperature_c}, ...]} or text/csv with
    the header ``time,sensor,temperature_c``; ``?replace=true`` overwrites conflicting stored
    values. Answers {accepted, duplicates, conflicts, conflict_rows, replaced, rejected,
    rejected_count}."""
    requested_units(us_offered=False)
    pour = _pour_or_404(pour_id)
    if pour["archived"]:
        return problem(409, "Conflict", f"pour {pour_id!r} is archived: it takes no new readings")
    limit = int(current_app.config["MAX_READINGS_PER_UPLOAD"])
    if request.mimetype == "text/csv":
        rows, from_csv = _csv_rows(limit), True
    elif request.is_json:
        rows, from_csv = _json_rows(limit), False
    else:
        raise UnsupportedMediaType("send application/json or text/csv")
    if not rows:
        return _invalid("Invalid readings", [{"field": "readings", "message": "no readings"}])
    sensors = {*_sensor_ids(pour["scenario"]), AIR_SENSOR}
    try:
        earliest = pour["placed_at"] - EARLIEST_BEFORE_PLACEMENT
    except OverflowError:  # a pour stored before placed_at was bounded
        earliest = datetime.min.replace(tzinfo=UTC)
    latest = datetime.now(UTC) + LATEST_AFTER_NOW
    replace = _replace_flag()
    good: list[tuple[datetime, str, float]] = []
    good_rows: list[int] = []
    rejected: list[dict[str, Any]] = []
    for i, row in enumerate(rows):
        reading, problems = _check_row(row, sensors, earliest, latest, from_csv)
        if reading is not None:
            good.append(reading)
            good_rows.append(i)
        rejected += [{"row": i, "field": f, "message": m} for f, m in problems]
    if not good:
        errors = [
            {"field": f"readings.{r['row']}.{r['field']}", "message": r["message"]}
            for r in rejected
        ]
        unknown = sum(1 for r in rejected if r["field"] == "sensor")
        detail = f"all {len(rows)} reading(s) were rejected: see errors"
        if unknown:
            detail += f"; the pour's sensors are {_sensor_list(sensors)}"
        return problem(422, "Invalid readings", detail, errors)
    done = store.add_readings(store.get_db(), pour_id, good, pour["placed_at"], replace)
    conflicts = [
        {
            "row": good_rows[index],
            "time": store.iso_utc(good[index][0]),
            "sensor": good[index][1],
            "temperature_c": good[index][2],
            "stored_temperature_c": stored,
        }
        for index, stored in done.conflicts[:MAX_CONFLICT_ROWS]
    ]
    listed, count = capped(rejected)
    return jsonify(
        accepted=done.accepted,
        duplicates=done.duplicates,
        conflicts=len(done.conflicts),
        conflict_rows=conflicts,
        replaced=done.replaced,
        rejected=listed,
        rejected_count=count,
    )


def _replace_flag() -> bool:
    """``?replace=true``: overwrite stored readings that the upload contradicts."""
    value = request.args.get("replace", "false").lower()
    if value not in ("true", "false"):
        raise RefusedError(
            _invalid("Invalid query", [{"field": "replace", "message": "true or false"}])
        )
    return value == "true"


def _window_bound(name: str) -> datetime | None:
    text = request.args.get(name)
    if text is None:
        return None
    moment, why = _aware_time(text)
    if moment is None:
        raise RefusedError(_invalid("Invalid query", [{"field": name, "message": why}]))
    return moment


@bp.get("/v1/pours/<pour_id>/readings")
def get_readings(pour_id: str) -> Response:
    """Stored readings by time then sensor; ``?from=&to=`` (inclusive, ISO 8601 with offset),
    ``?sensor=``; JSON, or CSV (time,sensor,temperature_c,hours) by Accept or ``?format=csv``."""
    us = requested_units() == "us"
    _pour_or_404(pour_id)
    fmt = choose_format(MEDIA_TYPES, "json")
    start, end = _window_bound("from"), _window_bound("to")
    if start is not None and end is not None and start > end:
        return _invalid("Invalid query", [{"field": "to", "message": "earlier than from"}])
    readings = store.readings_for(store.get_db(), pour_id, start, end, request.args.get("sensor"))
    if fmt == "json":
        body = {"readings": readings}
        return jsonify(units.body_to_us(body) if us else body)
    out = io.StringIO()
    writer = SafeCsvWriter(out)
    writer.writerow([*CSV_HEADER, "hours"])
    for r in readings:
        writer.writerow([r["time"], r["sensor"], r["temperature_c"], r["hours"]])
    text = out.getvalue()
    return Response(units.csv_to_us(text) if us else text, mimetype="text/csv")
