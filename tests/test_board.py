"""The site board: HTML pages of stored pours (status words, escaping, refresh, login with a
signed cookie when reads need a token) through Flask's test client, and as people see it:
headless Chromium driven over the DevTools protocol loads the pages from a running gunicorn.

Readings are made by the model itself (the planned forecast of each pour plus an offset), so
every number on the pages comes from a real calibration. Screenshots go to pytest's tmp_path;
with ``POURHEAT_SCREENSHOTS_DIR=docs/screenshots`` small copies go there (README images).
"""

import base64
import copy
import json
import os
import re
import signal
import socket
import subprocess
import sys
import time
import xml.etree.ElementTree as ET
from datetime import UTC, datetime, timedelta, timezone
from pathlib import Path

import gunicorn.config
import pytest
import requests

from service.app import create_app
from service.blueprints.board import COOKIE
from service.convert import CAUTIONS
from tests.conftest import CONTRACT_SCENARIO, keep_artefact, require_program

REPO = Path(__file__).resolve().parents[1]
MARKUP_NAME = "<script>alert(1)</script><b>x</b>"
TOKEN = "board-test-token-0123456789abcdef"
SITE = timezone(timedelta(hours=-5))


def _scenario(limits: dict | None = None, thickness_m: float = 2.0) -> dict:
    scenario = copy.deepcopy(CONTRACT_SCENARIO)
    scenario["element"]["thickness_m"] = thickness_m
    scenario["duration_h"] = 120
    scenario["sensors"] = [
        {"id": "T1", "depth_m": 0.05},
        {"id": "T2", "depth_m": thickness_m / 2},
    ]
    scenario["faces"]["top"]["insulation_removal_h"] = 100
    if limits:
        scenario["limits"] = limits
    return scenario


POURS = {
    # name: (scenario, hours since placement of the first and last reading)
    MARKUP_NAME: (_scenario(), 30.0, 0.5),
    "Footing B": (_scenario({"max_temperature_c": 40, "max_differential_c": 19}), 30.0, 6.0),
    "Slab C": (_scenario({"max_temperature_c": 90, "max_differential_c": 40}, 0.6), 20.0, 0.3),
}
"""Three pours: forecast to exceed 70 C; measured over its 40 C limit with a logger silent for
6 h; and a thin slab within generous limits."""


def seed(post) -> dict[str, str]:
    """Store the pours of POURS and their readings through ``post(path, json) -> (status,
    body)``; returns name -> pour id."""
    now = datetime.now(UTC).replace(microsecond=0)
    ids = {}
    for name, (scenario, first_ago_h, last_ago_h) in POURS.items():
        placed = (now - timedelta(hours=first_ago_h + 1)).astimezone(SITE)
        status, body = post(
            "/v1/pours", {"name": name, "placed_at": placed.isoformat(), "scenario": scenario}
        )
        assert status == 201, body
        ids[name] = body["id"]
        status, planned = post("/v1/forecasts", scenario)
        assert status == 200, planned
        rows = [
            {
                "time": (placed + timedelta(hours=h)).isoformat(),
                "sensor": sensor,
                "temperature_c": round(planned["series"]["sensors"][sensor][h] + 0.4, 2),
            }
            for h in range(1, int(first_ago_h + 1 - last_ago_h) + 1)
            for sensor in ("T1", "T2")
        ]
        status, body = post(f"/v1/pours/{ids[name]}/readings", {"readings": rows})
        assert status == 200 and body["accepted"] == len(rows), body
    return ids


@pytest.fixture(scope="module")
def board(tmp_path_factory):
    """An app with the three pours stored, and their ids."""
    app = create_app(
        {"TESTING": True, "DATABASE": str(tmp_path_factory.mktemp("board") / "b.sqlite3")}
    )
    client = app.test_client()

    def post(path, payload):
        response = client.post(path, json=payload)
        return response.status_code, response.get_json()

    return app, seed(post)


def _rows(html: str) -> dict[str, str]:
    """Table rows of the board by pour id."""
    return {
        m.group(1): row
        for row in html.split("<tr>")[2:]
        if (m := re.search(r'href="/board/pours/(\w+)"', row))
    }


def test_board_lists_pours_with_status_in_words_and_colour(board):
    app, ids = board
    response = app.test_client().get("/board")
    assert response.status_code == 200
    html = response.get_data(as_text=True)
    assert '<meta http-equiv="refresh" content="300">' in html
    assert '<meta name="viewport" content="width=device-width, initial-scale=1">' in html
    rows = _rows(html)
    assert set(rows) == set(ids.values())
    first, footing, slab = (rows[ids[n]] for n in POURS)
    assert 'class="state state-forecast"' in first and "forecast to exceed" in first
    assert "measured exceeding" in footing and "logger silent" in footing
    assert 'class="state state-measured"' in footing
    assert "within limits" in slab and "forecast to exceed" not in slab
    assert "logger silent" not in first + slab
    for row in rows.values():
        assert re.search(r"\d+(\.\d)? (min|h) ago", row)  # age of the newest reading
        assert re.search(r"\d+\.\d °C <small>\(T\d", row)  # peak so far, with its sensor
        assert "top insulation off" in row  # next planned removal at 100 h
    assert "6.0 h ago" in footing


def test_stored_strings_are_escaped(board):
    app, ids = board
    client = app.test_client()
    for path in ("/board", f"/board/pours/{ids[MARKUP_NAME]}"):
        html = client.get(path).get_data(as_text=True)
        assert "&lt;script&gt;alert(1)&lt;/script&gt;&lt;b&gt;x&lt;/b&gt;" in html
        assert "<script" not in html and "<b>x" not in html
    chart = client.get(f"/board/pours/{ids[MARKUP_NAME]}/chart.svg")
    texts = [
        "".join(t.itertext()) for t in ET.fromstring(chart.data).iter() if t.tag.endswith("text")
    ]
    assert MARKUP_NAME in texts  # the chart title, as text


def test_pour_page_shows_chart_readings_calibration_removals_and_cautions(board):
    app, ids = board
    client = app.test_client()
    html = client.get(f"/board/pours/{ids['Footing B']}").get_data(as_text=True)
    assert f'src="/board/pours/{ids["Footing B"]}/chart.svg"' in html
    assert re.search(r"<td>T1</td><td>\d+\.\d °C</td>", html)
    assert re.search(r"<td>T2</td><td>\d+\.\d °C</td>", html)
    assert "calibrated to the readings so far" in html and "RMS fit error" in html
    assert "top insulation off:" in html and "(100 h after placement)" in html
    for caution in CAUTIONS:
        assert caution in html
    chart = client.get(f"/board/pours/{ids['Footing B']}/chart.png?size=a4")
    assert chart.status_code == 200 and chart.data.startswith(b"\x89PNG")
    assert client.get(f"/board/pours/{ids['Footing B']}/chart.png?size=huge").status_code == 422
    assert client.get("/board/pours/nope").status_code == 404


def test_pour_without_readings_shows_its_planned_forecast(tmp_path):
    client = create_app({"TESTING": True, "DATABASE": str(tmp_path / "p.sqlite3")}).test_client()
    placed = (datetime.now(UTC).replace(microsecond=0) - timedelta(hours=3)).isoformat()
    created = client.post(
        "/v1/pours", json={"name": "New", "placed_at": placed, "scenario": _scenario()}
    )
    page = client.get(f"/board/pours/{created.get_json()['id']}")
    assert page.status_code == 200
    assert "no readings yet: this is the planned forecast" in page.text
    assert "No readings yet." in page.text
    assert "logger silent" in client.get("/board").text  # placed 3 h ago, nothing heard


def test_sensor_id_with_tex_markup_charts_as_plain_text(tmp_path):
    """A sensor id like ``$\\frac{$`` once made the pour's chart a 500 (matplotlib parsed it as
    math text); it is drawn as it is."""
    client = create_app({"TESTING": True, "DATABASE": str(tmp_path / "t.sqlite3")}).test_client()
    odd = "$\\frac{$"
    scenario = _scenario()
    scenario["sensors"] = [{"id": odd, "depth_m": 1.0}]
    placed = datetime.now(UTC).replace(microsecond=0) - timedelta(hours=6)
    created = client.post(
        "/v1/pours", json={"name": "Tex", "placed_at": placed.isoformat(), "scenario": scenario}
    )
    pour_id = created.get_json()["id"]
    rows = [
        {"time": (placed + timedelta(hours=h)).isoformat(), "sensor": odd, "temperature_c": 20 + h}
        for h in range(1, 6)
    ]
    assert client.post(f"/v1/pours/{pour_id}/readings", json={"readings": rows}).status_code == 200
    for path in (f"/v1/pours/{pour_id}/forecast?format=svg", f"/board/pours/{pour_id}/chart.svg"):
        chart = client.get(path)
        assert chart.status_code == 200
        texts = [
            "".join(t.itertext())
            for t in ET.fromstring(chart.data).iter()
            if t.tag.endswith("text")
        ]
        assert f"Sensor {odd}" in texts
    assert client.get(f"/v1/pours/{pour_id}/forecast?format=png").status_code == 200


def _locked_app(tmp_path, **settings):
    return create_app(
        {
            "TESTING": True,
            "DATABASE": str(tmp_path / "locked.sqlite3"),
            "AUTH_TOKENS": TOKEN,
            "AUTH_READS": True,
            **settings,
        }
    )


def test_login_sets_a_short_lived_strict_cookie_when_reads_need_a_token(tmp_path):
    client = _locked_app(tmp_path).test_client()
    refused = client.get("/board")
    assert refused.status_code == 303
    assert refused.headers["Location"].startswith("/board/login?next=/board")
    assert client.get("/board/pours/x/chart.svg").status_code == 401
    form = client.get("/board/login")
    assert form.status_code == 200 and 'type="password" name="token"' in form.text
    wrong = client.post("/board/login", data={"token": "not-the-token-at-all"})
    assert wrong.status_code == 401 and "not valid" in wrong.text
    assert client.get_cookie(COOKIE, path="/board") is None

    signed = client.post("/board/login", data={"token": TOKEN, "next": "/board"})
    assert signed.status_code == 303 and signed.headers["Location"] == "/board"
    cookie = signed.headers["Set-Cookie"]
    assert "HttpOnly" in cookie and "SameSite=Strict" in cookie and "Path=/board" in cookie
    assert "Max-Age=43200" in cookie and "Secure" not in cookie
    assert TOKEN not in cookie
    assert client.get("/board").status_code == 200
    # the cookie opens the board, not the API (which still needs the bearer header)
    assert client.get("/v1/pours").status_code == 401
    assert client.get("/v1/pours", headers={"Authorization": f"Bearer {TOKEN}"}).status_code == 200

    behind_tls = client.post(
        "/board/login", data={"token": TOKEN}, headers={"X-Forwarded-Proto": "https"}
    )
    assert "Secure" in behind_tls.headers["Set-Cookie"]
    out = client.post("/board/logout")
    assert out.status_code == 303 and client.get("/board").status_code == 303


def test_board_cookie_expires_is_tamper_proof_and_ends_with_its_token(tmp_path):
    app = _locked_app(tmp_path, BOARD_SESSION_HOURS=1 / 3600, BOARD_SECRET="fixed-secret")
    client = app.test_client()
    client.post("/board/login", data={"token": TOKEN})
    value = client.get_cookie(COOKIE, path="/board").value
    assert client.get("/board").status_code == 200
    client.set_cookie(COOKIE, value[:-2] + ("AA" if value[-2:] != "AA" else "BB"), path="/board")
    assert client.get("/board").status_code == 303  # altered signature
    time.sleep(2.2)
    client.set_cookie(COOKIE, value, path="/board")
    assert client.get("/board").status_code == 303  # older than its 1 s lifetime

    fresh = _locked_app(tmp_path, BOARD_SECRET="fixed-secret")
    first = fresh.test_client()
    first.post("/board/login", data={"token": TOKEN})
    kept = first.get_cookie(COOKIE, path="/board").value
    withdrawn = _locked_app(
        tmp_path, BOARD_SECRET="fixed-secret", AUTH_TOKENS="another-token-0123456789abcdef"
    ).test_client()
    withdrawn.set_cookie(COOKIE, kept, path="/board")
    assert withdrawn.get("/board").status_code == 303  # same key, token no longer configured


def test_login_goes_only_to_board_pages(tmp_path):
    client = _locked_app(tmp_path).test_client()
    for target in ("//evil.example/board", "https://evil.example/", "/v1/pours", "/board\\x"):
        answer = client.post("/board/login", data={"token": TOKEN, "next": target})
        assert answer.headers["Location"] == "/board"


def test_board_is_open_when_reads_are(tmp_path):
    app = create_app(
        {"TESTING": True, "DATABASE": str(tmp_path / "o.sqlite3"), "AUTH_TOKENS": TOKEN}
    )
    client = app.test_client()
    page = client.get("/board")
    assert page.status_code == 200 and "No pours stored yet" in page.text
    assert client.get("/board/login").status_code == 303


# ---- As people see it: gunicorn + headless Chromium --------------------------------------

CHROMIUM_FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--remote-debugging-address=127.0.0.1",
    "--remote-debugging-port=0",
    "--window-size=1000,900",
]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _wait(check, what: str, seconds: float = 30.0):
    deadline = time.monotonic() + seconds
    while True:
        found = check()
        if found:
            return found
        assert time.monotonic() < deadline, f"{what} did not happen within {seconds} s"
        time.sleep(0.1)


@pytest.fixture
def served(tmp_path):
    """gunicorn on a free loopback port with a temporary database; stopped afterwards."""
    port = _free_port()
    log = (tmp_path / "gunicorn.log").open("w")
    settings = gunicorn.config.Config().settings
    quiet = ["--no-control-socket"] if "control_socket_disable" in settings else []
    server = subprocess.Popen(
        [sys.executable, "-m", "gunicorn", "-w", "2", "-t", "90", "-b", f"127.0.0.1:{port}",
         *quiet, "service.app:create_app()"],
        cwd=REPO, env={**os.environ, "POURHEAT_DB": str(tmp_path / "served.sqlite3")},
        stdout=log, stderr=log, start_new_session=True,
    )  # fmt: skip
    base = f"http://127.0.0.1:{port}"

    def up() -> bool:
        assert server.poll() is None, (tmp_path / "gunicorn.log").read_text()
        try:
            return requests.get(f"{base}/healthz", timeout=2).status_code == 200
        except requests.RequestException:
            return False

    try:
        _wait(up, "gunicorn start")
        yield base
    finally:
        os.killpg(server.pid, signal.SIGTERM)
        server.wait(timeout=30)
        log.close()


class DevTools:
    """A headless Chromium page driven over the Chrome DevTools Protocol (a websocket)."""

    def __init__(self, chromium: str, folder: Path) -> None:
        import websocket  # websocket-client, a test dependency

        profile = folder / "chromium-profile"
        self.log = (folder / "chromium.log").open("w")
        self.process = subprocess.Popen(
            [chromium, *CHROMIUM_FLAGS, f"--user-data-dir={profile}", "about:blank"],
            stdout=self.log, stderr=self.log, start_new_session=True,
        )  # fmt: skip
        active = profile / "DevToolsActivePort"
        port = _wait(
            lambda: active.exists() and active.read_text().split("\n")[0].strip(),
            "Chromium DevTools start",
        )
        pages = requests.get(f"http://127.0.0.1:{port}/json/list", timeout=10).json()
        target = next(p for p in pages if p["type"] == "page")
        self.socket = websocket.create_connection(
            target["webSocketDebuggerUrl"], timeout=60, suppress_origin=True
        )
        self.next_id, self.events = 0, []
        self.call("Page.enable")

    def call(self, method: str, **params):
        self.next_id += 1
        self.socket.send(json.dumps({"id": self.next_id, "method": method, "params": params}))
        while True:
            message = json.loads(self.socket.recv())
            if message.get("id") == self.next_id:
                assert "error" not in message, message
                return message["result"]
            self.events.append(message)

    def evaluate(self, expression: str):
        result = self.call("Runtime.evaluate", expression=expression, returnByValue=True)
        return result["result"].get("value")

    def open(self, url: str) -> None:
        self.call("Page.navigate", url=url)
        _wait(
            lambda: self.evaluate(
                "document.readyState === 'complete' && location.href === "
                + json.dumps(url)
                + " && Array.from(document.images).every(i => i.complete)"
            ),
            f"load of {url}",
            90.0,
        )

    def screenshot(self, path: Path) -> None:
        data = self.call("Page.captureScreenshot", format="png", captureBeyondViewport=True)
        path.write_bytes(base64.b64decode(data["data"]))

    def close(self) -> None:
        self.socket.close()
        os.killpg(self.process.pid, signal.SIGTERM)
        self.process.wait(timeout=30)
        self.log.close()


def test_board_in_a_browser(served, tmp_path):
    """Chromium shows the status words, loads the chart image, shows a name holding markup as
    text (no script runs, no dialog opens) and fits a phone's width; screenshots are saved."""
    chromium = require_program("chromium", "the board is checked in a real browser")

    def post(path, payload):
        response = requests.post(served + path, json=payload, timeout=60)
        return response.status_code, response.json()

    ids = seed(post)
    browser = DevTools(chromium, tmp_path)
    try:
        browser.open(f"{served}/board")
        text = browser.evaluate("document.body.innerText")
        for word in ("forecast to exceed", "measured exceeding", "logger silent", "within limits"):
            assert word in text
        assert MARKUP_NAME in text
        assert browser.evaluate("document.querySelectorAll('script, td b').length") == 0
        browser.screenshot(tmp_path / "board.png")

        pour_url = f"{served}/board/pours/{ids[MARKUP_NAME]}"
        browser.open(pour_url)
        assert browser.evaluate("document.querySelector('h1').textContent") == MARKUP_NAME
        assert browser.evaluate("document.querySelector('h1').children.length") == 0
        width = browser.evaluate("document.querySelector('img.chart').naturalWidth")
        assert width > 400, "the chart image did not load"
        assert "calibrated to the readings so far" in browser.evaluate("document.body.innerText")
        browser.screenshot(tmp_path / "board-pour.png")

        browser.call(
            "Emulation.setDeviceMetricsOverride",
            width=390, height=844, deviceScaleFactor=1, mobile=True,
        )  # fmt: skip
        browser.open(f"{served}/board")
        assert browser.evaluate("document.documentElement.scrollWidth") <= 392
        browser.screenshot(tmp_path / "board-phone.png")
        assert not [e for e in browser.events if e.get("method") == "Page.javascriptDialogOpening"]
    finally:
        browser.close()
    chart = requests.get(f"{served}/board/pours/{ids['Footing B']}/chart.png", timeout=60)
    (tmp_path / "chart-pour.png").write_bytes(chart.content)
    for name in ("board.png", "board-pour.png", "board-phone.png", "chart-pour.png"):
        assert (tmp_path / name).read_bytes().startswith(b"\x89PNG")
        keep_artefact(tmp_path / name)
