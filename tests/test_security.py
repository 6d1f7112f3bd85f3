"""Access control and request limits: bearer tokens (service/auth.py), CORS, and the body,
nesting, list, upload and compute limits (service/limits.py), each refused with a 4xx problem,
never a 500."""

import copy
import logging
from datetime import UTC, datetime, timedelta

import pytest

from service.app import create_app
from service.limits import json_depth
from tests.conftest import CONTRACT_SCENARIO

TOKEN = "s3cret-Token_0123456789abcdef"
OTHER_TOKEN = "another-token-ABCDEFGHIJKLMNOP"
ORIGIN = "https://dashboard.example.com"
PLACED_AT = (datetime.now(UTC) - timedelta(days=1)).replace(minute=0, second=0, microsecond=0)


def _z(moment: datetime) -> str:
    return moment.astimezone(UTC).replace(tzinfo=None).isoformat(timespec="seconds") + "Z"


def _pour() -> dict:
    scenario = copy.deepcopy(CONTRACT_SCENARIO)
    scenario["sensors"] = [{"id": "S1", "depth_m": 0.05}]
    return {"name": "Mat A", "placed_at": _z(PLACED_AT), "scenario": scenario}


def _bearer(token: str) -> dict[str, str]:
    return {"Authorization": f"Bearer {token}"}


@pytest.fixture
def make_app(tmp_path, monkeypatch):
    """An app factory with a fresh database and no token or CORS settings from the host."""
    for name in ("TOKENS", "TOKENS_FILE", "AUTH_READS", "CORS_ORIGINS"):
        monkeypatch.delenv(f"POURHEAT_{name}", raising=False)

    def make(**settings):
        return create_app({"TESTING": True, "DATABASE": str(tmp_path / "t.sqlite3"), **settings})

    return make


@pytest.fixture
def secured(make_app):
    """A test client of an app with two tokens."""
    return make_app(AUTH_TOKENS=f"{TOKEN}, {OTHER_TOKEN}").test_client()


# --- tokens ------------------------------------------------------------------------------


def test_no_tokens_configured_means_open(make_app):
    client = make_app().test_client()
    assert client.post("/v1/pours", json=_pour()).status_code == 201


def test_write_without_token_is_401_with_challenge(secured):
    response = secured.post("/v1/pours", json=_pour())
    assert response.status_code == 401
    assert response.mimetype == "application/problem+json"
    assert response.headers["WWW-Authenticate"] == 'Bearer realm="pourheat"'
    assert response.get_json()["status"] == 401


def test_other_scheme_counts_as_no_token(secured):
    response = secured.post("/v1/pours", json=_pour(), headers={"Authorization": "Basic eDp5"})
    assert response.status_code == 401
    assert "error=" not in response.headers["WWW-Authenticate"]


def test_wrong_token_is_401_invalid_token(secured):
    response = secured.post("/v1/pours", json=_pour(), headers=_bearer("wrong-token-000000"))
    assert response.status_code == 401
    challenge = response.headers["WWW-Authenticate"]
    assert challenge == 'Bearer realm="pourheat", error="invalid_token"'
    assert TOKEN not in response.get_data(as_text=True)


def test_right_tokens_allow_every_write(secured):
    created = secured.post("/v1/pours", json=_pour(), headers=_bearer(TOKEN))
    assert created.status_code == 201
    pid = created.get_json()["id"]
    reading = {"time": _z(PLACED_AT + timedelta(hours=1)), "sensor": "S1", "temperature_c": 21}
    url = f"/v1/pours/{pid}/readings"
    assert secured.post(url, json={"readings": [reading]}).status_code == 401
    posted = secured.post(url, json={"readings": [reading]}, headers=_bearer(OTHER_TOKEN))
    assert posted.status_code == 200
    assert secured.delete(f"/v1/pours/{pid}").status_code == 401
    assert secured.delete(f"/v1/pours/{pid}", headers=_bearer(TOKEN)).status_code == 204


def test_reads_and_compute_are_open_by_default(secured):
    pid = secured.post("/v1/pours", json=_pour(), headers=_bearer(TOKEN)).get_json()["id"]
    assert secured.get("/v1/pours").status_code == 200
    assert secured.get(f"/v1/pours/{pid}").status_code == 200
    assert secured.get(f"/v1/pours/{pid}/readings").status_code == 200
    short = {**copy.deepcopy(CONTRACT_SCENARIO), "duration_h": 24}
    assert secured.post("/v1/forecasts", json=short).status_code == 200


def test_reads_need_a_token_with_auth_reads(make_app):
    client = make_app(AUTH_TOKENS=[TOKEN], AUTH_READS="true").test_client()
    assert client.get("/v1/pours").status_code == 401
    assert client.get("/v1/pours", headers=_bearer("nope-nope-nope-nope")).status_code == 401
    assert client.get("/v1/pours", headers=_bearer(TOKEN)).status_code == 200
    short = {**copy.deepcopy(CONTRACT_SCENARIO), "duration_h": 24}
    assert client.post("/v1/forecasts", json=short).status_code == 401
    assert client.get("/v1/forecasts?shape=slab").status_code == 401


@pytest.mark.parametrize("path", ["/healthz", "/", "/openapi.json"])
def test_meta_endpoints_stay_open(make_app, path):
    client = make_app(AUTH_TOKENS=[TOKEN], AUTH_READS=True).test_client()
    assert client.get(path).status_code == 200


def test_unknown_route_is_404_not_401(secured):
    assert secured.post("/v1/nothing").status_code == 404
    assert secured.put("/healthz").status_code == 405


def test_tokens_from_a_file(make_app, tmp_path, monkeypatch):
    tokens_file = tmp_path / "tokens"
    tokens_file.write_text(f"# site dashboards\n{TOKEN}  # north gate\n\n{OTHER_TOKEN}\n")
    monkeypatch.setenv("POURHEAT_TOKENS_FILE", str(tokens_file))
    monkeypatch.setenv("POURHEAT_AUTH_READS", "true")
    app = create_app({"TESTING": True, "DATABASE": str(tmp_path / "f.sqlite3")})
    assert app.config["AUTH_TOKENS"] == frozenset({TOKEN, OTHER_TOKEN})
    assert app.config["AUTH_READS"] is True
    client = app.test_client()
    assert client.get("/v1/pours").status_code == 401
    assert client.get("/v1/pours", headers=_bearer(OTHER_TOKEN)).status_code == 200


def test_tokens_from_env_and_file_together(make_app, tmp_path, monkeypatch):
    tokens_file = tmp_path / "tokens"
    tokens_file.write_text(f"{OTHER_TOKEN}\n")
    monkeypatch.setenv("POURHEAT_TOKENS", TOKEN)
    monkeypatch.setenv("POURHEAT_TOKENS_FILE", str(tokens_file))
    app = create_app({"TESTING": True, "DATABASE": str(tmp_path / "f.sqlite3")})
    assert app.config["AUTH_TOKENS"] == frozenset({TOKEN, OTHER_TOKEN})
    assert "TOKENS" not in app.config


def test_missing_or_empty_tokens_file_fails_at_start(make_app, tmp_path):
    with pytest.raises(ValueError, match="cannot be read"):
        make_app(AUTH_TOKENS_FILE=str(tmp_path / "absent"))
    empty = tmp_path / "empty"
    empty.write_text("# nothing yet\n")
    with pytest.raises(ValueError, match="holds no token"):
        make_app(AUTH_TOKENS_FILE=str(empty))


def test_malformed_settings_fail_at_start_without_echoing_tokens(make_app):
    with pytest.raises(ValueError) as error:
        make_app(AUTH_TOKENS="has space-in-it-0123456")
    assert "space" not in str(error.value)
    with pytest.raises(ValueError, match="AUTH_READS"):
        make_app(AUTH_READS="maybe")


def test_tokens_never_reach_the_logs(make_app, caplog):
    caplog.set_level(logging.DEBUG)
    app = make_app(AUTH_TOKENS=f"{TOKEN},short")
    client = app.test_client()
    client.post("/v1/pours", json=_pour(), headers=_bearer(TOKEN))
    client.post("/v1/pours", json=_pour(), headers=_bearer(TOKEN + "x"))
    client.post("/v1/pours", json=[1], headers=_bearer(TOKEN))
    client.get("/v1/pours", headers=_bearer(TOKEN))
    assert "shorter than" in caplog.text  # start-up warning, without the token
    assert TOKEN not in caplog.text
    assert "short," not in caplog.text and "'short'" not in caplog.text


# --- CORS --------------------------------------------------------------------------------


def test_no_cors_headers_by_default(make_app):
    response = make_app().test_client().get("/healthz", headers={"Origin": ORIGIN})
    assert "Access-Control-Allow-Origin" not in response.headers


def test_allowed_origin_is_echoed(make_app):
    client = make_app(CORS_ORIGINS=f"{ORIGIN}, https://other.example.org").test_client()
    response = client.get("/v1/pours", headers={"Origin": ORIGIN})
    assert response.headers["Access-Control-Allow-Origin"] == ORIGIN
    assert "Origin" in response.headers["Vary"]
    assert "Pourheat-Caution" in response.headers["Access-Control-Expose-Headers"]


def test_other_origins_get_no_cors_headers(make_app):
    client = make_app(CORS_ORIGINS=ORIGIN).test_client()
    response = client.get("/v1/pours", headers={"Origin": "https://evil.example.net"})
    assert response.status_code == 200
    assert "Access-Control-Allow-Origin" not in response.headers
    assert "Origin" in response.headers["Vary"]
    preflight = client.options(
        "/v1/pours",
        headers={"Origin": "https://evil.example.net", "Access-Control-Request-Method": "POST"},
    )
    assert "Access-Control-Allow-Origin" not in preflight.headers


def test_preflight_from_allowed_origin_needs_no_token(make_app):
    client = make_app(CORS_ORIGINS=ORIGIN, AUTH_TOKENS=[TOKEN], AUTH_READS=True).test_client()
    response = client.options(
        "/v1/pours",
        headers={
            "Origin": ORIGIN,
            "Access-Control-Request-Method": "POST",
            "Access-Control-Request-Headers": "authorization, content-type",
        },
    )
    assert response.status_code == 204
    assert response.headers["Access-Control-Allow-Origin"] == ORIGIN
    assert "POST" in response.headers["Access-Control-Allow-Methods"]
    allowed = response.headers["Access-Control-Allow-Headers"].lower()
    assert "authorization" in allowed and "content-type" in allowed
    refused = client.get("/v1/pours", headers={"Origin": ORIGIN})
    assert refused.status_code == 401
    assert refused.headers["Access-Control-Allow-Origin"] == ORIGIN  # the page can read why


# --- limits ------------------------------------------------------------------------------


def test_oversized_body_is_413(make_app):
    client = make_app(MAX_CONTENT_LENGTH=1000).test_client()
    response = client.post(
        "/v1/forecasts", data=b'{"a": "' + b"x" * 2000 + b'"}', content_type="application/json"
    )
    assert response.status_code == 413
    assert response.mimetype == "application/problem+json"


def test_body_limit_from_the_environment(make_app, monkeypatch):
    monkeypatch.setenv("POURHEAT_MAX_BODY_BYTES", "4096")
    monkeypatch.setenv("POURHEAT_MAX_JSON_DEPTH", "8")
    app = make_app()
    assert app.config["MAX_CONTENT_LENGTH"] == 4096
    assert app.config["MAX_JSON_DEPTH"] == 8


@pytest.mark.parametrize("path", ["/v1/forecasts", "/v1/plans", "/v1/comparisons", "/v1/pours"])
def test_deep_nesting_is_422_not_500(make_app, path):
    client = make_app().test_client()
    body = '{"a": ' + "[" * 5000 + "]" * 5000 + "}"
    response = client.post(path, data=body, content_type="application/json")
    assert response.status_code == 422
    assert "POURHEAT_MAX_JSON_DEPTH" in response.get_json()["detail"]
    unclosed = client.post(path, data="{" + '"a":{' * 5000, content_type="application/json")
    assert unclosed.status_code == 422


def test_brackets_inside_strings_do_not_count():
    assert json_depth(b'{"a": "[[[[{{{{\\"[[[[", "b": [1, {"c": []}]}', 32) == 4
    assert json_depth(b"[" * 100, 32) == 33


def test_deep_nesting_inside_a_real_scenario_is_refused_before_parsing(make_app):
    client = make_app(MAX_JSON_DEPTH=4).test_client()
    scenario = copy.deepcopy(CONTRACT_SCENARIO)
    scenario["faces"]["top"]["extra"] = {"x": {"y": 1}}
    response = client.post("/v1/forecasts", json=scenario)
    assert response.status_code == 422
    assert "4 levels" in response.get_json()["errors"][0]["message"]


def test_hourly_list_too_long_is_422_naming_the_field(make_app):
    client = make_app().test_client()
    scenario = copy.deepcopy(CONTRACT_SCENARIO)
    scenario["ambient"]["air_temperature_c"] = [20.0] * 20001
    response = client.post("/v1/forecasts", json=scenario)
    assert response.status_code == 422
    fields = [e["field"] for e in response.get_json()["errors"]]
    assert "ambient.air_temperature_c" in fields


def test_csv_rows_over_the_limit_is_413(make_app):
    client = make_app(MAX_READINGS_PER_UPLOAD=5).test_client()
    pid = client.post("/v1/pours", json=_pour()).get_json()["id"]
    rows = "".join(f"{_z(PLACED_AT + timedelta(minutes=m))},S1,20\n" for m in range(6))
    response = client.post(
        f"/v1/pours/{pid}/readings",
        data="time,sensor,temperature_c\n" + rows,
        content_type="text/csv",
    )
    assert response.status_code == 413
    assert "5" in response.get_json()["detail"]


def test_compute_budget_is_422(make_app):
    client = make_app(MAX_CELL_STEPS=1000).test_client()
    response = client.post("/v1/forecasts", json=copy.deepcopy(CONTRACT_SCENARIO))
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"


def test_compute_budget_from_the_environment(make_app, monkeypatch):
    monkeypatch.setenv("POURHEAT_MAX_CELL_STEPS", "4e6")
    assert make_app().config["MAX_CELL_STEPS"] == 4e6


@pytest.mark.parametrize("bad", ["0", "-3", "lots"])
def test_malformed_limit_fails_at_start(make_app, bad):
    with pytest.raises(ValueError, match="MAX_JSON_DEPTH"):
        make_app(MAX_JSON_DEPTH=bad)


@pytest.mark.parametrize("path", ["/v1/forecasts", "/v1/plans", "/v1/comparisons", "/v1/pours"])
def test_non_utf8_json_body_is_400(make_app, path):
    client = make_app().test_client()
    response = client.post(path, data=b'{"name": "\xff\xfe"}', content_type="application/json")
    assert response.status_code == 400
    assert response.mimetype == "application/problem+json"


def test_non_utf8_csv_upload_is_400(make_app):
    client = make_app().test_client()
    pid = client.post("/v1/pours", json=_pour()).get_json()["id"]
    response = client.post(
        f"/v1/pours/{pid}/readings",
        data=b"time,sensor,temperature_c\n\xff,S1,20\n",
        content_type="text/csv",
    )
    assert response.status_code == 400


@pytest.mark.parametrize("body", ["[1, 2]", '"text"', "42", "null", "true"])
@pytest.mark.parametrize("path", ["/v1/forecasts", "/v1/plans", "/v1/comparisons", "/v1/pours"])
def test_json_that_is_not_an_object_is_400(make_app, path, body):
    response = make_app().test_client().post(path, data=body, content_type="application/json")
    assert response.status_code == 400
    assert "JSON object" in response.get_json()["detail"]


# --- whole bodies, nosniff, fail-closed settings, access log (issue: hostile input) -------


def _csv_upload(rows: int) -> tuple[bytes, dict]:
    lines, values = ["time,sensor,temperature_c"], {}
    for i in range(rows):
        moment = _z(PLACED_AT + timedelta(minutes=i))
        values[(moment, "S1")] = round(20.75 + (i % 500) / 100, 2)
        lines.append(f"{moment},S1,{values[(moment, 'S1')]}")
    return ("\n".join(lines) + "\n").encode(), values


def _chunked(client, path: str, body: bytes):
    """A chunked upload as a WSGI server that frames chunks (gunicorn) hands it to the app:
    no Content-Length, and ``wsgi.input_terminated``."""
    import io

    return client.post(
        path,
        input_stream=io.BytesIO(body),
        headers={"Content-Type": "text/csv", "Transfer-Encoding": "chunked"},
        environ_overrides={"wsgi.input_terminated": True},
    )


def test_chunked_upload_over_the_limit_is_413_and_stores_nothing(make_app):
    # Werkzeug alone cut such a body at the limit: half the rows stored, the last one mid-number
    client = make_app(MAX_CONTENT_LENGTH=16384).test_client()
    pour_id = client.post("/v1/pours", json=_pour()).get_json()["id"]
    body, _ = _csv_upload(1000)  # about 37 KB
    response = _chunked(client, f"/v1/pours/{pour_id}/readings", body)
    assert response.status_code == 413
    assert response.get_json()["errors"][0]["field"] == "(body)"
    assert client.get(f"/v1/pours/{pour_id}/readings").get_json()["readings"] == []


def test_chunked_upload_under_the_limit_is_stored_whole(make_app):
    client = make_app(MAX_CONTENT_LENGTH=65536).test_client()
    pour_id = client.post("/v1/pours", json=_pour()).get_json()["id"]
    body, values = _csv_upload(1000)
    response = _chunked(client, f"/v1/pours/{pour_id}/readings", body)
    assert response.status_code == 200
    assert response.get_json()["accepted"] == 1000
    stored = client.get(f"/v1/pours/{pour_id}/readings").get_json()["readings"]
    assert {(r["time"], r["sensor"]): r["temperature_c"] for r in stored} == values


def test_body_shorter_than_its_content_length_is_400_and_stores_nothing(make_app):
    import io

    client = make_app().test_client()
    pour_id = client.post("/v1/pours", json=_pour()).get_json()["id"]
    body, _ = _csv_upload(10)
    response = client.post(
        f"/v1/pours/{pour_id}/readings",
        input_stream=io.BytesIO(body[:100]),
        headers={"Content-Type": "text/csv"},
        environ_overrides={"CONTENT_LENGTH": str(len(body))},  # the client went away early
    )
    assert response.status_code == 400
    assert client.get(f"/v1/pours/{pour_id}/readings").get_json()["readings"] == []


@pytest.mark.parametrize(
    ("method", "path", "kwargs"),
    [
        ("get", "/healthz", {}),
        ("get", "/openapi.json", {}),
        ("get", "/v1/pours/unknown", {}),
        ("post", "/v1/forecasts", {"json": {"element": {}}}),
        ("post", "/v1/pours", {"data": b"x" * 5000, "content_type": "text/csv"}),
    ],
)
def test_every_response_says_nosniff(make_app, method, path, kwargs):
    client = make_app(MAX_CONTENT_LENGTH=1000).test_client()
    response = getattr(client, method)(path, **kwargs)
    assert response.headers["X-Content-Type-Options"] == "nosniff"


@pytest.mark.parametrize("tokens", ["", " , ", ","])
def test_tokens_set_but_empty_fail_at_start(make_app, monkeypatch, tokens):
    monkeypatch.setenv("POURHEAT_TOKENS", tokens)
    with pytest.raises(ValueError, match="POURHEAT_TOKENS"):
        make_app()


def test_auth_reads_without_any_token_fails_at_start(make_app, monkeypatch):
    monkeypatch.setenv("POURHEAT_AUTH_READS", "true")
    with pytest.raises(ValueError, match="POURHEAT_AUTH_READS"):
        make_app()


def test_access_log_never_shows_a_query_string_or_credentials():
    from datetime import timedelta as delta
    from types import SimpleNamespace

    from gunicorn.config import Config

    from service.serving import AccessLogger

    config = Config()
    config.set("access_log_format", '%(r)s %(q)s "%(f)s" %({authorization}i)s %({raw_uri}e)s')
    logger = AccessLogger(config)
    secret = "QuerySecret0123456789"
    environ = {
        "REQUEST_METHOD": "GET",
        "RAW_URI": f"/v1/pours?token={secret}&archived=true",
        "PATH_INFO": "/v1/pours",
        "QUERY_STRING": f"token={secret}&archived=true",
        "SERVER_PROTOCOL": "HTTP/1.1",
        "HTTP_REFERER": f"https://dash.example.com/?key={secret}",
        "HTTP_AUTHORIZATION": f"Bearer {secret}",
    }
    request = SimpleNamespace(headers=[("AUTHORIZATION", f"Bearer {secret}")])
    response = SimpleNamespace(status="200 OK", headers=[], sent=10)
    atoms = logger.atoms(response, request, environ, delta(seconds=0))
    line = config.access_log_format % logger.atoms_wrapper_class(atoms)
    assert secret not in line
    assert "GET /v1/pours?[2 parameter(s) not logged] HTTP/1.1" in line
