"""Bounded hostile-client check of the HTTP service under gunicorn, as `make serve` runs it.

    .venv/bin/python scripts/hostile.py [--slow 16] [--keep]

Starts gunicorn (deploy/gunicorn.conf.py, 4 workers) on a free 127.0.0.1 port with a temporary
database, a 256 KiB body limit (POURHEAT_MAX_BODY_BYTES) and a 3 s client timeout
(POURHEAT_CLIENT_TIMEOUT_S), and plays the clients a public endpoint meets:

- chunked:    a CSV upload over the body limit, chunked and with Content-Length: 413 and nothing
              stored; one under it, chunked: every row stored with its exact value; a chunked
              body cut off mid-way: nothing stored; malformed chunk framing: a 4xx;
- slow:       ``--slow`` connections trickling a byte every 0.25 s (half the request head, half
              a body): ``/healthz`` must answer within 2 s all along, and every slow connection
              must be dropped by the server (408 for bodies) within its time bound;
- injection:  ids and names that a spreadsheet would evaluate (``=HYPERLINK(...)``, ``+``,
              ``@``, ``-``) come back neutralised in every CSV export, which the csv module and
              the service's own upload read back; control characters and the variant name
              ``base`` are refused with a 422 naming the field;
- bad input:  CR-only line ends (stored), a CSV cell over 131,072 characters, a pour placed at
              year 1 (4xx naming the field), a sensor id ``$\\frac{$`` (status and exports 200);
- hygiene:    every response has ``X-Content-Type-Options: nosniff``; a token sent in a query
              string never reaches the access log;
- settings:   gunicorn refuses to start with ``POURHEAT_TOKENS=' , '``, naming the setting;
- timeout:    under the gevent worker a forecast past POURHEAT_FORECAST_TIMEOUT_S is a 503 with
              Retry-After (a second server with a 1 s cap).

Every socket has a timeout and every loop a bound; the whole run takes about 30 s. Prints one
line per check and PASS or FAIL; exit 1 on any failure. Standard library only.
"""

import argparse
import contextlib
import csv
import io
import json
import os
import secrets
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable, Iterable
from datetime import UTC, datetime, timedelta
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
LIMIT_BYTES = 262144
CLIENT_TIMEOUT_S = 3
SOCKET_TIMEOUT_S = 30.0
STARTUP_TIMEOUT_S = 90.0  # three servers boot at once on a shared machine
HEALTHZ_WITHIN_S = 2.0
TRICKLE_EVERY_S = 0.25
STRIPPED_ENV = ("POURHEAT_TOKENS", "POURHEAT_TOKENS_FILE", "POURHEAT_AUTH_READS", "POURHEAT_BIND")
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")

SCENARIO = {
    "element": {"shape": "slab", "thickness_m": 0.4},
    "mix": {
        "cement_kg_m3": 350,
        "water_kg_m3": 160,
        "hydration": {
            "total_heat_j_kg": 460000,
            "tau_h": 13.0,
            "beta": 0.9,
            "alpha_u": 0.75,
            "activation_energy_j_mol": 41000,
        },
    },
    "placement": {"temperature_c": 20.0},
    "ambient": {"air_temperature_c": 15.0},
    "faces": {"top": {"insulation_r_m2k_w": 0.5}, "bottom": {"adiabatic": True}},
    "duration_h": 24,
    "output_interval_h": 3,
    "resolution": {"surface_cell_m": 0.04, "growth": 1.5, "max_cell_m": 0.2, "max_step_h": 3},
}
"""A small pour whose forecast takes well under a second."""
HEAVY = {
    **SCENARIO,
    "element": {"shape": "block", "width_m": 6.0, "height_m": 2.0, "length_m": 8.0},
    "faces": {"top": {"insulation_r_m2k_w": 0.5}, "bottom": {"adiabatic": True}},
    "duration_h": 168,
    "output_interval_h": 1,
    "resolution": None,
}
"""A 3D block forecast of several seconds (within the default compute budget)."""
del HEAVY["resolution"]


# --- HTTP over raw sockets ------------------------------------------------------------------


class Answer:
    """A parsed HTTP response."""

    def __init__(self, raw: bytes) -> None:
        head, _, self.body = raw.partition(b"\r\n\r\n")
        lines = head.decode("latin-1").split("\r\n")
        parts = lines[0].split(" ", 2)
        self.status = int(parts[1]) if len(parts) > 1 and parts[1].isdigit() else 0
        self.headers = {}
        for line in lines[1:]:
            name, _, value = line.partition(":")
            self.headers[name.strip().lower()] = value.strip()

    def json(self) -> dict:
        return json.loads(self.body or b"{}")


class Server:
    """One gunicorn with its port, log and the responses seen (for the nosniff check)."""

    def __init__(self, port: int, log_path: Path, process: subprocess.Popen) -> None:
        self.port = port
        self.log_path = log_path
        self.process = process
        self.answers: list[tuple[str, Answer]] = []

    def exchange(self, pieces: Iterable[bytes], what: str, timeout: float = SOCKET_TIMEOUT_S):
        """Send ``pieces`` (a whole request; send errors after a early answer are ignored) and
        read the answer until the server closes (requests say ``Connection: close``)."""
        with socket.create_connection(("127.0.0.1", self.port), timeout=timeout) as sock:
            with contextlib.suppress(BrokenPipeError, ConnectionResetError):
                for piece in pieces:
                    sock.sendall(piece)
            raw = b""
            with contextlib.suppress(ConnectionResetError):
                while chunk := sock.recv(65536):
                    raw += chunk
        answer = Answer(raw)
        self.answers.append((what, answer))
        return answer

    def call(
        self,
        method: str,
        path: str,
        body: bytes | None = None,
        content_type: str = "application/json",
        chunked: bool = False,
        timeout: float = SOCKET_TIMEOUT_S,
    ) -> Answer:
        head = f"{method} {path} HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\n"
        head += "Accept: application/json\r\n"
        pieces: list[bytes] = []
        if body is not None:
            head += f"Content-Type: {content_type}\r\n"
            if chunked:
                head += "Transfer-Encoding: chunked\r\n"
                pieces = [
                    b"%x\r\n%s\r\n" % (len(body[i : i + 8192]), body[i : i + 8192])
                    for i in range(0, len(body), 8192)
                ] + [b"0\r\n\r\n"]
            else:
                head += f"Content-Length: {len(body)}\r\n"
                pieces = [body]
        return self.exchange([(head + "\r\n").encode(), *pieces], f"{method} {path}", timeout)

    def json_call(self, method: str, path: str, payload: object) -> Answer:
        return self.call(method, path, json.dumps(payload).encode())


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def start_server(folder: Path, name: str, **env_extra: str) -> Server:
    port = free_port()
    env = {k: v for k, v in os.environ.items() if k not in STRIPPED_ENV}
    env.update(
        {
            "PORT": str(port),
            "POURHEAT_DB": str(folder / f"{name}.sqlite3"),
            "POURHEAT_MAX_BODY_BYTES": str(LIMIT_BYTES),
            "POURHEAT_CLIENT_TIMEOUT_S": str(CLIENT_TIMEOUT_S),
            "POURHEAT_WORKERS": "4",
            **env_extra,
        }
    )
    log_path = folder / f"{name}.log"
    with open(log_path, "wb") as log:
        process = subprocess.Popen(
            [sys.executable, "-m", "gunicorn", "-c", "deploy/gunicorn.conf.py"]
            + ["--no-control-socket", "service.app:create_app()"],
            cwd=ROOT,
            env=env,
            stdin=subprocess.DEVNULL,
            stdout=log,
            stderr=log,
            start_new_session=True,
        )
    return Server(port, log_path, process)


def wait_healthy(server: Server) -> None:
    deadline = time.monotonic() + STARTUP_TIMEOUT_S
    while time.monotonic() < deadline:
        if server.process.poll() is not None:
            raise RuntimeError(f"gunicorn exited with code {server.process.returncode}")
        with contextlib.suppress(OSError):
            if server.call("GET", "/healthz", timeout=2.0).status == 200:
                return
        time.sleep(0.2)
    raise RuntimeError(f"/healthz did not answer within {STARTUP_TIMEOUT_S:g} s")


def stop_server(server: Server) -> None:
    with contextlib.suppress(ProcessLookupError):
        os.killpg(server.process.pid, signal.SIGTERM)
    try:
        server.process.wait(timeout=SOCKET_TIMEOUT_S)
    except subprocess.TimeoutExpired:
        with contextlib.suppress(ProcessLookupError):
            os.killpg(server.process.pid, signal.SIGKILL)
        server.process.wait(timeout=SOCKET_TIMEOUT_S)


# --- helpers --------------------------------------------------------------------------------


def z(moment: datetime) -> str:
    return moment.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


PLACED_AT = (datetime.now(UTC) - timedelta(hours=12)).replace(minute=0, second=0, microsecond=0)


def create_pour(server: Server, sensors: list[str], name: str = "hostile") -> str:
    scenario = {**SCENARIO, "sensors": [{"id": s, "depth_m": 0.2} for s in sensors]}
    answer = server.json_call(
        "POST", "/v1/pours", {"name": name, "placed_at": z(PLACED_AT), "scenario": scenario}
    )
    if answer.status != 201:
        raise RuntimeError(f"pour not created: {answer.status} {answer.body[:300]!r}")
    return answer.json()["id"]


def readings_csv(sensor: str, count: int, start_minute: int = 0) -> tuple[bytes, dict]:
    """A CSV upload of ``count`` readings a minute apart, and {(time, sensor): value}."""
    rows = ["time,sensor,temperature_c"]
    values = {}
    for i in range(count):
        moment = z(PLACED_AT + timedelta(minutes=start_minute + i))
        value = round(20.0 + (i % 1000) / 100.0 + 0.75, 2)
        rows.append(f"{moment},{sensor},{value}")
        values[(moment, sensor)] = value
    return ("\n".join(rows) + "\n").encode(), values


def stored(server: Server, pour_id: str) -> list[dict]:
    answer = server.call("GET", f"/v1/pours/{pour_id}/readings")
    return answer.json().get("readings", []) if answer.status == 200 else []


def expect(failures: list[str], condition: bool, message: str) -> None:
    if not condition:
        failures.append(message)


def field_named(answer: Answer, field: str) -> bool:
    return any(e.get("field", "").startswith(field) for e in answer.json().get("errors", []))


# --- checks ---------------------------------------------------------------------------------


def check_chunked(server: Server) -> list[str]:
    failures: list[str] = []
    pour_id = create_pour(server, ["S1"])
    path = f"/v1/pours/{pour_id}/readings"
    big, _ = readings_csv("S1", 9000)  # about 330 KB, over the 256 KiB limit
    for chunked in (True, False):
        answer = server.call("POST", path, big, "text/csv", chunked=chunked)
        kind = "chunked" if chunked else "Content-Length"
        expect(failures, answer.status == 413, f"{kind} body over the limit: {answer.status}")
    expect(failures, stored(server, pour_id) == [], "a refused upload stored readings")
    # a chunked body cut off mid-way (the client goes away): nothing stored
    head = (
        f"POST {path} HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: text/csv\r\n"
        "Transfer-Encoding: chunked\r\n\r\n"
    ).encode()
    part = big[:20000]
    with socket.create_connection(("127.0.0.1", server.port), timeout=SOCKET_TIMEOUT_S) as sock:
        sock.sendall(head + b"%x\r\n%s\r\n" % (len(part), part))
    time.sleep(0.5)
    expect(failures, stored(server, pour_id) == [], "a cut-off chunked upload stored readings")
    # malformed chunk framing: a 4xx, never a 5xx
    bad = server.exchange(
        [head.replace(b"Host:", b"Connection: close\r\nHost:"), b"zz\r\nabc\r\n0\r\n\r\n"],
        "malformed chunks",
    )
    expect(failures, 400 <= bad.status < 500, f"malformed chunk framing: {bad.status}")
    # under the limit, chunked: every row, exact values
    small, values = readings_csv("S1", 1200)
    answer = server.call("POST", path, small, "text/csv", chunked=True)
    expect(failures, answer.status == 200, f"chunked upload under the limit: {answer.status}")
    got = {(r["time"], r["sensor"]): r["temperature_c"] for r in stored(server, pour_id)}
    expect(failures, got == values, f"chunked upload stored {len(got)} of {len(values)} exactly")
    return failures


def check_slow_clients(server: Server, count: int) -> list[str]:
    failures: list[str] = []
    pour_id = create_pour(server, ["S1"])
    head_only = f"POST /v1/pours/{pour_id}/readings HTTP/1.1\r\nHost: 127.0.0.1\r\n".encode()
    body_head = (
        f"POST /v1/pours/{pour_id}/readings HTTP/1.1\r\nHost: 127.0.0.1\r\n"
        "Content-Type: text/csv\r\nContent-Length: 100000\r\n\r\n"
    ).encode()
    slow = []
    for i in range(count):
        sock = socket.create_connection(("127.0.0.1", server.port), timeout=SOCKET_TIMEOUT_S)
        if i % 2:
            sock.sendall(body_head)  # the head at once, then the body a byte at a time
            slow.append(
                {"sock": sock, "data": b"time,sensor,temperature_c\n" * 4000, "kind": "body"}
            )
        else:
            slow.append({"sock": sock, "data": head_only * 1000, "kind": "head"})
        sock.setblocking(False)
    started = time.monotonic()
    bound = started + 3 * CLIENT_TIMEOUT_S + 5.0
    late: list[float] = []
    checks = 0
    sent = 0
    while time.monotonic() < bound and any("closed" not in s for s in slow):
        for s in slow:
            if "closed" in s:
                continue
            try:
                s["sock"].send(s["data"][sent : sent + 1])
            except (BlockingIOError, InterruptedError):
                pass
            except OSError:  # reset by the server: dropped
                s["closed"] = time.monotonic() - started
                s["answer"] = b""
                continue
            try:
                data = s["sock"].recv(4096)
                s["closed"] = time.monotonic() - started
                s["answer"] = data
            except (BlockingIOError, InterruptedError):
                pass
            except OSError:
                s["closed"] = time.monotonic() - started
                s["answer"] = b""
        sent += 1
        t0 = time.monotonic()
        try:
            ok = server.call("GET", "/healthz", timeout=HEALTHZ_WITHIN_S).status == 200
        except OSError:
            ok = False
        took = time.monotonic() - t0
        checks += 1
        if not ok or took > HEALTHZ_WITHIN_S:
            late.append(round(took, 2))
        time.sleep(max(0.0, TRICKLE_EVERY_S - took))
    for s in slow:
        s["sock"].close()
    open_left = sum("closed" not in s for s in slow)
    expect(failures, not late, f"/healthz late or failing {len(late)} of {checks} times: {late}")
    expect(failures, open_left == 0, f"{open_left} of {count} slow connections still open")
    bodies = [s for s in slow if s["kind"] == "body" and "closed" in s]
    answered = [s["answer"].startswith(b"HTTP/1.1 408") or not s["answer"] for s in bodies]
    expect(
        failures,
        all(answered),  # 408, or reset: the server closes with the rest of the body unread
        "a slow body was answered other than 408: "
        + ", ".join(
            repr(s["answer"][:20]) for s, ok in zip(bodies, answered, strict=True) if not ok
        ),
    )
    closed = [s["closed"] for s in slow if "closed" in s]
    print(
        f"  slow: {count} connections, /healthz checked {checks} times, slowest drop "
        f"{max(closed, default=0):.1f} s (bound {CLIENT_TIMEOUT_S} s + a poll)",
        flush=True,
    )
    expect(failures, stored(server, pour_id) == [], "a slow upload stored readings")
    return failures


def _neutralised(cell: str) -> bool:
    try:
        float(cell)
        return True
    except ValueError:
        return not cell.startswith(FORMULA_TRIGGERS)


def check_injection(server: Server) -> list[str]:
    failures: list[str] = []
    evil = ['=HYPERLINK("http://example.com/x","click")', "+1+1", "@SUM(A1:A2)", "-2+3"]
    pour_id = create_pour(server, [*evil, "S1"], name="=cmd|' /C calc'!A0")
    readings = [
        {"time": z(PLACED_AT + timedelta(hours=1)), "sensor": s, "temperature_c": -4.5}
        for s in [*evil, "S1"]
    ]
    answer = server.json_call("POST", f"/v1/pours/{pour_id}/readings", {"readings": readings})
    expect(failures, answer.status == 200, f"readings of formula-like ids: {answer.status}")
    export = server.call("GET", f"/v1/pours/{pour_id}/readings?format=csv")
    rows = list(csv.reader(io.StringIO(export.body.decode(), newline="")))
    cells = [cell for row in rows[1:] for cell in row]
    expect(failures, len(rows) == 1 + len(readings), f"readings export has {len(rows)} rows")
    expect(failures, all(map(_neutralised, cells)), f"readings export not neutralised: {cells}")
    expect(failures, "-4.5" in cells, "a negative temperature was mangled in the export")
    # the service's own upload reads the export back (same readings: all duplicates)
    back = io.StringIO()
    writer = csv.writer(back, lineterminator="\n")
    writer.writerows(row[:3] for row in rows)
    again = server.call(
        "POST", f"/v1/pours/{pour_id}/readings", back.getvalue().encode(), "text/csv"
    )
    expect(
        failures,
        again.status == 200 and again.json().get("duplicates") == len(readings),
        f"re-upload of the export: {again.status} {again.body[:200]!r}",
    )
    forecast = server.call("GET", f"/v1/pours/{pour_id}/forecast?format=csv")
    expect(failures, forecast.status == 200, f"pour forecast CSV: {forecast.status}")
    # control characters: refused, naming the field
    for bad_id in ("S\r1", "S\t1", "\x7fS", "S\x85"):
        scenario = {**SCENARIO, "sensors": [{"id": bad_id, "depth_m": 0.2}]}
        refused = server.json_call(
            "POST", "/v1/pours", {"name": "x", "placed_at": z(PLACED_AT), "scenario": scenario}
        )
        expect(
            failures,
            refused.status == 422 and field_named(refused, "scenario.sensors.0.id"),
            f"sensor id {bad_id!r}: {refused.status}",
        )
    refused = server.json_call(
        "POST", "/v1/pours", {"name": "a\rb", "placed_at": z(PLACED_AT), "scenario": SCENARIO}
    )
    expect(failures, refused.status == 422 and field_named(refused, "name"), "pour name with CR")
    # comparisons: formula-like variant names neutralised; "base" reserved
    variants = {"=1+1": {"placement": {"temperature_c": 15}}, "@x": {"duration_h": 12}}
    comparison = server.json_call(
        "POST", "/v1/comparisons?format=csv", {"base": SCENARIO, "variants": variants}
    )
    names = [row[0] for row in csv.reader(io.StringIO(comparison.body.decode(), newline=""))][1:]
    expect(
        failures,
        comparison.status == 200 and names == ["base", "'=1+1", "'@x"],
        f"comparison CSV variants: {comparison.status} {names}",
    )
    reserved = server.json_call(
        "POST", "/v1/comparisons", {"base": SCENARIO, "variants": {"base": {"duration_h": 12}}}
    )
    expect(
        failures,
        reserved.status == 422 and field_named(reserved, "variants"),
        f"variant named base: {reserved.status}",
    )
    return failures


def check_bad_input(server: Server) -> list[str]:
    failures: list[str] = []
    tex = "$\\frac{$"
    pour_id = create_pour(server, [tex, "S1"])
    path = f"/v1/pours/{pour_id}/readings"
    lines = ["time,sensor,temperature_c"] + [
        f"{z(PLACED_AT + timedelta(hours=h))},{tex},{20 + h}" for h in range(1, 6)
    ]
    answer = server.call("POST", path, "\r".join(lines).encode(), "text/csv")
    expect(
        failures,
        answer.status == 200 and answer.json().get("accepted") == 5,
        f"CR-only CSV: {answer.status} {answer.body[:200]!r}",
    )
    huge = f"time,sensor,temperature_c\n{z(PLACED_AT)},S1,{'9' * 140000}\n".encode()
    answer = server.call("POST", path, huge, "text/csv")
    expect(
        failures,
        answer.status == 422 and field_named(answer, "readings.0"),
        f"CSV cell over 131072 characters: {answer.status}",
    )
    for placed_at in ("0001-01-01T00:00:00Z", "9999-12-31T23:59:59Z"):
        answer = server.json_call(
            "POST", "/v1/pours", {"name": "x", "placed_at": placed_at, "scenario": SCENARIO}
        )
        expect(
            failures,
            answer.status == 422 and field_named(answer, "placed_at"),
            f"placed_at {placed_at}: {answer.status}",
        )
    for what in ("status", "forecast", "forecast?format=csv", "readings?format=csv"):
        answer = server.call("GET", f"/v1/pours/{pour_id}/{what}", timeout=60.0)
        expect(failures, answer.status == 200, f"sensor {tex!r}: GET {what}: {answer.status}")
    return failures


def check_query_token(server: Server, secret: str) -> list[str]:
    answer = server.call("GET", f"/healthz?token={secret}&access_token={secret}")
    return [] if answer.status == 200 else [f"/healthz with a query: {answer.status}"]


def check_access_log(server: Server, secret: str) -> list[str]:
    text = server.log_path.read_text(errors="replace")
    failures: list[str] = []
    expect(failures, "GET /healthz" in text, "no access log lines")
    expect(failures, secret not in text, "a query-string token reached the access log")
    return failures


def check_nosniff(server: Server) -> list[str]:
    missing = sorted(
        {
            w
            for w, a in server.answers
            if a.status and a.headers.get("x-content-type-options") != "nosniff"
        }
    )
    return [f"no nosniff on {missing}"] if missing else []


def check_fail_closed(server: Server) -> list[str]:
    try:
        code = server.process.wait(timeout=STARTUP_TIMEOUT_S)
    except subprocess.TimeoutExpired:
        stop_server(server)
        return ["gunicorn started with POURHEAT_TOKENS=' , '"]
    log = server.log_path.read_text(errors="replace")
    failures: list[str] = []
    expect(failures, code != 0, f"gunicorn exited with {code}")
    expect(failures, "POURHEAT_TOKENS" in log, "the start-up error does not name POURHEAT_TOKENS")
    return failures


def check_forecast_timeout(server: Server) -> list[str]:
    try:
        wait_healthy(server)
        started = time.monotonic()
        answer = server.json_call("POST", "/v1/forecasts", HEAVY)
        took = time.monotonic() - started
        failures: list[str] = []
        # Either stopped at the cap (503 with Retry-After), or refused at once because the
        # compute budget predicts it cannot finish within the cap (422 naming the cap).
        stopped = answer.status == 503 and "retry-after" in answer.headers
        refused = answer.status == 422 and b"wall-clock cap" in answer.body and took < 1.0
        expect(
            failures,
            stopped or refused,
            f"forecast past the 1 s cap: {answer.status} after {took:.1f} s",
        )
        expect(failures, server.call("GET", "/healthz").status == 200, "/healthz after the cap")
        return failures
    finally:
        stop_server(server)


def run_checks(folder: Path, slow: int) -> bool:
    secret = "query-" + secrets.token_urlsafe(16)
    server = start_server(folder, "main")
    # started at once, checked after the main server's checks
    tokens = start_server(folder, "tokens", POURHEAT_TOKENS=" , ", POURHEAT_WORKERS="1")
    capped = start_server(folder, "cap", POURHEAT_FORECAST_TIMEOUT_S="1", POURHEAT_WORKERS="1")
    results: list[tuple[str, list[str]]] = []

    def run(name: str, check: Callable[[], list[str]]) -> None:
        started = time.monotonic()
        try:
            failures = check()
        except Exception as error:  # a check that cannot run is a failure, with its reason
            failures = [f"{type(error).__name__}: {error}"]
        results.append((name, failures))
        verdict = "ok" if not failures else "FAILED"
        print(f"{name:16s} {verdict} ({time.monotonic() - started:.1f} s)", flush=True)
        for failure in failures:
            print(f"  {failure}", flush=True)

    try:
        _run_all(server, tokens, capped, secret, slow, run)
    finally:
        for each in (server, tokens, capped):
            stop_server(each)
    failed = any(failures for _, failures in results)
    if failed:
        tail = server.log_path.read_text(errors="replace").splitlines()[-15:]
        print("gunicorn log, last lines:\n  " + "\n  ".join(tail))
    print("FAIL" if failed else "PASS", flush=True)
    return not failed


def _run_all(
    server: Server,
    tokens: Server,
    capped: Server,
    secret: str,
    slow: int,
    run: Callable[[str, Callable[[], list[str]]], None],
) -> None:
    try:
        wait_healthy(server)
        run("chunked", lambda: check_chunked(server))
        run("slow clients", lambda: check_slow_clients(server, slow))
        run("injection", lambda: check_injection(server))
        run("bad input", lambda: check_bad_input(server))
        run("query token", lambda: check_query_token(server, secret))
        run("nosniff", lambda: check_nosniff(server))
    finally:
        stop_server(server)
    run("access log", lambda: check_access_log(server, secret))
    run("fail closed", lambda: check_fail_closed(tokens))
    run("forecast cap", lambda: check_forecast_timeout(capped))


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--slow", type=int, default=16, help="slow connections (default 16)")
    parser.add_argument("--keep", action="store_true", help="keep the temporary folder")
    args = parser.parse_args(argv)
    folder = Path(tempfile.mkdtemp(prefix="pourheat-hostile-"))
    try:
        return 0 if run_checks(folder, args.slow) else 1
    finally:
        if args.keep:
            print(f"kept {folder}")
        else:
            shutil.rmtree(folder, ignore_errors=True)


if __name__ == "__main__":
    sys.exit(main())
