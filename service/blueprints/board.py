"""The site board: server-rendered HTML pages of the stored pours (no JavaScript).

``GET /board`` lists the pours that are not archived with their status in words and colour
(measured exceeding, forecast to exceed, logger silent, within limits), the age of the newest
reading, the peak so far and the forecast peak, and the next planned removal.
``GET /board/pours/<id>`` shows one pour: status, chart (``/board/pours/<id>/chart.svg`` or
``.png``), each sensor's latest reading, the calibration, the planned removals and the cautions,
with a link to the PDF report (``/board/pours/<id>/report.pdf``). Pages refresh themselves every
``BOARD_REFRESH_S`` seconds (default 300). Jinja autoescaping is on for every template, so a
stored name or sensor id is always shown as text.

Access. With reads open (the default) the board is open too. With tokens configured and
``POURHEAT_AUTH_READS=true`` a browser cannot send a bearer header, so ``POST /board/login``
takes a token from a form and, if it is a configured token, sets a signed cookie
(itsdangerous, timestamped) naming which token by a short digest: HttpOnly, SameSite=Strict,
Path=/board, Max-Age ``BOARD_SESSION_HOURS`` (default 12 h, a shift), and Secure when the
request came over HTTPS (directly or as ``X-Forwarded-Proto: https`` from the proxy) or
``BOARD_COOKIE_SECURE=true``. The cookie is checked on every board request: past its age, or
when its token is withdrawn from the configuration, it no longer opens the board. The signing
key is ``BOARD_SECRET`` (``POURHEAT_BOARD_SECRET``) or, if unset, derived from the configured
tokens, so every gunicorn worker and restart agrees and changing the tokens ends all sessions.
A bearer header works on the board as on the API (for scripts).
"""

import hashlib
import time
from collections import OrderedDict
from datetime import UTC, datetime, timedelta
from typing import Any

from flask import (
    Blueprint,
    Response,
    current_app,
    redirect,
    render_template,
    request,
    url_for,
)
from itsdangerous import BadSignature, URLSafeTimedSerializer
from werkzeug.exceptions import NotFound

from service import store
from service.auth import is_configured_token, parse_bool
from service.blueprints.forecasts import chart_size
from service.blueprints.monitoring import pour_chart_response
from service.charts import hours_text, removal_marks
from service.errors import InvalidScenarioError
from service.limits import request_deadline
from service.monitoring import pour_forecast, pour_status
from service.store import get_db, get_pour, readings_for

bp = Blueprint("board", __name__, url_prefix="/board")

COOKIE = "pourheat_board"
SALT = "pourheat-board-session"
DEFAULT_REFRESH_S = 300
DEFAULT_SESSION_HOURS = 12.0
DEFAULT_SILENT_AFTER_H = 2.0
"""A pour's logger counts as silent when its newest reading is older than this [h] (common
practice, no source: loggers typically report every 15 to 60 minutes)."""
COMPUTE_BUDGET_S = 15.0
"""The list page computes stale statuses for at most this long [s]; the rest show the last
stored status with its time."""
CACHE_SIZE = 16
CACHE_TTL_S = 300.0
"""A pour's forecast is reused for this long [s] while its readings are unchanged."""
OPEN_ENDPOINTS = frozenset({"board.login", "board.logout"})
STATES = {
    "measured": ("measured exceeding", "Measured temperatures exceed a limit"),
    "forecast": ("forecast to exceed", "The calibrated forecast exceeds a limit"),
    "silent": ("logger silent", "No reading for a while: check the logger"),
    "within": ("within limits", "Measured and forecast temperatures within the limits"),
    "unknown": ("no status yet", "The status has not been computed"),
}
"""Status words (shown with their colour, never by colour alone) and their explanations."""

_forecasts: "OrderedDict[tuple, tuple[float, dict[str, Any]]]" = OrderedDict()
"""Per-process cache of pour forecast bodies, keyed by pour id and its readings' state."""


def _secret() -> bytes:
    config = current_app.config
    if config.get("BOARD_SECRET"):
        return str(config["BOARD_SECRET"]).encode()
    tokens = sorted(config.get("AUTH_TOKENS") or ())
    return hashlib.sha256(("\0".join([SALT, *tokens])).encode()).digest()


def _serializer() -> URLSafeTimedSerializer:
    return URLSafeTimedSerializer(_secret(), salt=SALT)


def _token_tag(token: str) -> str:
    return hashlib.sha256(token.encode()).hexdigest()[:16]


def _session_hours() -> float:
    return float(current_app.config.get("BOARD_SESSION_HOURS", DEFAULT_SESSION_HOURS))


def _locked() -> bool:
    """Whether board reads need a token (tokens configured and reads protected)."""
    config = current_app.config
    return bool(config.get("AUTH_TOKENS")) and bool(config.get("AUTH_READS"))


def _signed_in() -> bool:
    """A valid bearer header, or a board cookie within its age whose token is still
    configured."""
    tokens = current_app.config["AUTH_TOKENS"]
    scheme, _, given = request.headers.get("Authorization", "").strip().partition(" ")
    if scheme.lower() == "bearer" and is_configured_token(given.strip(), tokens):
        return True
    cookie = request.cookies.get(COOKIE)
    if not cookie:
        return False
    try:
        tag = _serializer().loads(cookie, max_age=int(_session_hours() * 3600))
    except BadSignature:
        return False
    return any(_token_tag(t) == tag for t in tokens)


@bp.before_request
def _access() -> Response | None:
    if request.endpoint in OPEN_ENDPOINTS or not _locked() or _signed_in():
        return None
    if request.endpoint in ("board.index", "board.pour"):
        return redirect(url_for("board.login", next=request.full_path.rstrip("?")), 303)
    return Response("sign in at /board/login\n", 401, mimetype="text/plain")


@bp.after_request
def _headers(response: Response) -> Response:
    if response.mimetype == "text/html":
        response.headers["Cache-Control"] = "no-store"
        response.headers["Content-Security-Policy"] = (
            "default-src 'none'; img-src 'self'; style-src 'unsafe-inline'; "
            "form-action 'self'; frame-ancestors 'none'; base-uri 'none'"
        )
        response.headers["X-Content-Type-Options"] = "nosniff"
    return response


@bp.app_template_filter("one")
def _one_decimal(value: float | None) -> str:
    """A number to one decimal without float noise (``-`` when missing)."""
    if value is None:
        return "-"
    return f"{value:.1f}".rstrip("0").rstrip(".")


def _safe_next(target: str | None) -> str:
    """Only a path on the board itself (no open redirect)."""
    if target and target.startswith("/board") and "//" not in target and "\\" not in target:
        return target
    return url_for("board.index")


@bp.route("/login", methods=["GET", "POST"])
def login() -> Response | str:
    """A token form; a configured token sets the board cookie and goes on to ``next``."""
    target = _safe_next(request.values.get("next"))
    if not _locked():
        return redirect(target, 303)
    if request.method == "GET":
        return render_template("board/login.html", next=target, failed=False)
    token = request.form.get("token", "").strip()
    if not is_configured_token(token, current_app.config["AUTH_TOKENS"]):
        page = render_template("board/login.html", next=target, failed=True)
        return Response(page, 401, mimetype="text/html")
    response = redirect(target, 303)
    secure = (
        parse_bool(current_app.config.get("BOARD_COOKIE_SECURE", False), "BOARD_COOKIE_SECURE")
        or request.is_secure
        or request.headers.get("X-Forwarded-Proto", "").lower() == "https"
    )
    response.set_cookie(
        COOKIE,
        _serializer().dumps(_token_tag(token)),
        max_age=int(_session_hours() * 3600),
        path="/board",
        httponly=True,
        samesite="Strict",
        secure=secure,
    )
    return response


@bp.post("/logout")
def logout() -> Response:
    """Forget the board cookie."""
    response = redirect(url_for("board.login"), 303)
    response.delete_cookie(COOKIE, path="/board", httponly=True, samesite="Strict")
    return response


def _local(pour: dict[str, Any]) -> datetime:
    local = pour.get("placed_at_local")
    return datetime.fromisoformat(local) if local else pour["placed_at"]


def _age_text(hours: float) -> str:
    if hours < 1:
        return f"{max(hours * 60, 0):.0f} min"
    return f"{hours:.1f} h" if hours < 48 else f"{hours / 24:.1f} days"


def _forecast(pour: dict[str, Any], readings: list[dict[str, Any]], deadline: float) -> dict:
    """The pour's calibrated forecast body, from the cache while its readings are unchanged."""
    key = (pour["id"], len(readings), readings[-1]["time"] if readings else None)
    found = _forecasts.get(key)
    if found is not None and time.monotonic() - found[0] < CACHE_TTL_S:
        return found[1]
    body = pour_forecast(pour, readings, current_app.config["MAX_CELL_STEPS"], False, deadline)
    _forecasts[key] = (time.monotonic(), body)
    while len(_forecasts) > CACHE_SIZE:
        _forecasts.popitem(last=False)
    return body


def _states(status: dict[str, Any] | None, reading_age_h: float | None, now_h: float) -> list[str]:
    """Every state that applies, worst first (see STATES); with no reading at all the logger
    counts as silent once the pour is older than the silence threshold."""
    silent_after = float(current_app.config.get("BOARD_SILENT_AFTER_H", DEFAULT_SILENT_AFTER_H))
    states = []
    if status is not None and status.get("limit_measured_exceeded"):
        states.append("measured")
    if status is not None and status.get("limit_forecast_exceeded"):
        states.append("forecast")
    if (reading_age_h if reading_age_h is not None else now_h) > silent_after:
        states.append("silent")
    if status is None:
        states.append("unknown")
    elif not states:
        states.append("within")
    return states


def _next_removal(pour: dict[str, Any], now_h: float) -> dict[str, Any] | None:
    local = _local(pour)
    for hour, text in removal_marks(pour["scenario"]):
        if hour >= now_h:
            return {"what": text, "when": _clock(local, hour), "in": hours_text(hour - now_h)}
    return None


def _clock(local: datetime, hours: float) -> str:
    return f"{local + timedelta(hours=hours):%a %d %b %H:%M}"


def _pour_row(pour: dict[str, Any], page_start: float) -> dict[str, Any]:
    """What the list shows of one pour; computes its status if stale and time allows."""
    db = get_db()
    readings = readings_for(db, pour["id"])
    now = datetime.now(UTC)
    now_h = store.hours_between(pour["placed_at"], now)
    last = pour["last_reading_time"]
    age_h = store.hours_between(last, now) if last else None
    status = store.latest_status(db, pour["id"])
    error = None
    stale = status is None or (
        last is not None and store.parse_stored(status["computed_at"]) < last
    )
    if stale and time.monotonic() - page_start < COMPUTE_BUDGET_S:
        try:
            body = _forecast(pour, readings, page_start + COMPUTE_BUDGET_S + 20.0)
            status = pour_status(pour, readings, body)
            store.save_status(db, pour["id"], status)
            status = store.latest_status(db, pour["id"])
        except (InvalidScenarioError, RuntimeError) as exc:
            error = str(exc) or type(exc).__name__
    concrete = [r for r in readings if r["sensor"] != "air"]
    peak = max(concrete, key=lambda r: r["temperature_c"]) if concrete else None
    local = _local(pour)
    return {
        "pour": pour,
        "placed": f"{local:%a %d %b %Y %H:%M} ({local:%z})",
        "status": status,
        "states": [(s, *STATES[s]) for s in _states(status, age_h, now_h)],
        "age": None if age_h is None else _age_text(age_h),
        "peak": peak
        and {
            "value": f"{peak['temperature_c']:.1f} °C",
            "sensor": peak["sensor"],
            "when": _clock(local, peak["hours"]),
        },
        "next_removal": _next_removal(pour, now_h),
        "status_time": status and f"{store.parse_stored(status['computed_at']):%d %b %H:%M} UTC",
        "error": error,
    }


def _refresh_s() -> int:
    return int(current_app.config.get("BOARD_REFRESH_S", DEFAULT_REFRESH_S))


@bp.get("")
def index() -> str:
    """The stored pours with their status."""
    page_start = time.monotonic()
    db = get_db()
    rows = []
    for listed in store.list_pours(db):
        found = get_pour(db, listed["id"])
        if found is not None:
            rows.append(_pour_row({**listed, "scenario": found["scenario"]}, page_start))
    return render_template(
        "board/index.html",
        rows=rows,
        refresh_s=_refresh_s(),
        locked=_locked(),
        generated=datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC"),
    )


def _pour_or_404(pour_id: str) -> dict[str, Any]:
    pour = get_pour(get_db(), pour_id)
    if pour is None:
        raise NotFound(f"no pour {pour_id!r}")
    return pour


@bp.get("/pours/<pour_id>")
def pour(pour_id: str) -> str:
    """One pour: status, chart, latest readings, calibration, removals, cautions."""
    found = _pour_or_404(pour_id)
    listed = next((p for p in store.list_pours(get_db(), True) if p["id"] == pour_id), found)
    row = _pour_row({**listed, "scenario": found["scenario"]}, time.monotonic())
    readings = readings_for(get_db(), pour_id)
    local = _local(found)
    latest: dict[str, dict[str, Any]] = {}
    for r in readings:
        latest[r["sensor"]] = r
    now = datetime.now(UTC)
    sensors = [
        {
            "id": sensor,
            "value": f"{r['temperature_c']:.1f} °C",
            "when": _clock(local, r["hours"]),
            "age": _age_text(store.hours_between(store.parse_stored(r["time"]), now)),
        }
        for sensor, r in sorted(latest.items())
    ]
    body, error = None, row["error"]
    try:
        body = _forecast(found, readings, request_deadline())
    except (InvalidScenarioError, RuntimeError) as exc:
        error = str(exc) or type(exc).__name__
    removals = [
        {"what": text, "when": _clock(local, hour), "hours": hours_text(hour)}
        for hour, text in removal_marks(found["scenario"])
    ]
    return render_template(
        "board/pour.html",
        row=row,
        pour=found,
        sensors=sensors,
        body=body,
        removals=removals,
        error=error,
        refresh_s=_refresh_s(),
        locked=_locked(),
        generated=now.strftime("%Y-%m-%d %H:%M UTC"),
    )


@bp.get("/pours/<pour_id>/chart.<fmt>")
def chart(pour_id: str, fmt: str) -> Response:
    """The pour's chart (svg or png, ``?size=screen|a4``)."""
    if fmt not in ("svg", "png"):
        raise NotFound("charts are chart.svg or chart.png")
    found = _pour_or_404(pour_id)
    readings = readings_for(get_db(), pour_id)
    body = _forecast(found, readings, request_deadline())
    response = pour_chart_response(found, readings, body, fmt, chart_size())
    response.headers["Cache-Control"] = "no-store"
    return response


@bp.get("/pours/<pour_id>/report.pdf")
def report(pour_id: str) -> Response:
    """The pour's PDF report."""
    found = _pour_or_404(pour_id)
    readings = readings_for(get_db(), pour_id)
    body = _forecast(found, readings, request_deadline())
    return pour_chart_response(found, readings, body, "pdf")
