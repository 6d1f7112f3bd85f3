"""Bounded load test of the HTTP service: concurrent clients for a fixed time, then checks.

    .venv/bin/python scripts/load.py [--clients 8] [--seconds 60] [--port P] [--url URL]

Without ``--url`` it starts gunicorn itself (deploy/gunicorn.conf.py, access log off) on
127.0.0.1 with a fresh SQLite file in a temporary directory, and always stops it at the end.
It stores one pour with sensors, then runs ``--clients`` threads until ``--seconds`` have
passed, each picking at random: about 50 % POST /v1/forecasts (1D slabs 0.5-2.5 m, 48-168 h),
10 % POST /v1/plans (max_thickness_m, 48 h), 35 % POST /v1/pours/{id}/readings (CSV batches of
20 new readings, time stamps unique per thread) and 5 % GET /v1/pours/{id}/status.

A 5xx, a connection error, a timeout or an unexpected status (or an upload that does not
report its 20 readings accepted) is an error; a 422 from the compute budget or a 503 with
Retry-After is "refused", counted apart. At the end every reading acknowledged with a 200 must
be listed by GET /v1/pours/{id}/readings exactly once with its value, and the SQLite file must
pass PRAGMA integrity_check (with ``--url``, only when ``--db`` names the server's file).
Prints a table per request kind; exit 1 on any error, lost reading or integrity failure.

Standard library only; every request has a timeout; no request starts after the deadline.
With ``--url`` the requests go to that server only (``POURHEAT_TOKEN`` in the environment is
sent as a bearer token, as ``pourheat watch`` does); otherwise only to 127.0.0.1.
"""

import argparse
import contextlib
import csv
import io
import json
import math
import os
import random
import signal
import socket
import sqlite3
import subprocess
import sys
import tempfile
import threading
import time
import urllib.error
import urllib.request
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

KINDS = ("forecast", "plan", "readings", "status")
WEIGHTS = (50, 10, 35, 5)
SENSORS = ("T1", "T2", "T3", "air")  # the three of the pour plus the measured air temperature
SLOTS_PER_BATCH = 5  # time stamps per upload; x 4 sensors = 20 readings
BATCH = SLOTS_PER_BATCH * len(SENSORS)
PLACED_DAYS_AGO = 3
REQUEST_TIMEOUT_S = 45.0  # above the server's 40 s computation cap (POURHEAT_FORECAST_TIMEOUT_S)
FINAL_TIMEOUT_S = 120.0  # the final listing of every reading
STARTUP_TIMEOUT_S = 30.0
SHUTDOWN_TIMEOUT_S = 30.0
# The stored-pour environment of the spawned server is self-contained: no tokens, own database.
STRIPPED_ENV = ("POURHEAT_TOKENS", "POURHEAT_TOKENS_FILE", "POURHEAT_AUTH_READS", "POURHEAT_BIND")

MIX = {
    "cement_kg_m3": 380,
    "water_kg_m3": 160,
    "hydration": {
        "total_heat_j_kg": 460000,
        "tau_h": 13.0,
        "beta": 0.9,
        "alpha_u": 0.75,
        "activation_energy_j_mol": 41000,
    },
    "density_kg_m3": 2400,
    "specific_heat_j_kgk": 1000,
    "conductivity_w_mk": 2.5,
}
"""The mix of CONTRACT_SCENARIO in tests/conftest.py (copied: this script needs no test deps)."""


def slab(
    thickness_m: float,
    duration_h: int,
    placement_c: float = 20.0,
    air_c: float = 20.0,
    top_r: float = 0.5,
) -> dict:
    """A 1D slab scenario like CONTRACT_SCENARIO: insulated top, adiabatic bottom."""
    return {
        "element": {"shape": "slab", "thickness_m": thickness_m},
        "mix": MIX,
        "placement": {"temperature_c": placement_c},
        "ambient": {"air_temperature_c": air_c, "wind_m_s": 2.0},
        "faces": {"top": {"insulation_r_m2k_w": top_r}, "bottom": {"adiabatic": True}},
        "duration_h": duration_h,
    }


def pour_scenario() -> dict:
    """CONTRACT_SCENARIO with the sensors of tests/test_monitoring.py."""
    scenario = slab(2.0, 168)
    scenario["sensors"] = [
        {"id": "T1", "depth_m": 0.05},
        {"id": "T2", "depth_m": 1.0},
        {"id": "T3", "depth_m": 1.95},
    ]
    return scenario


@dataclass
class Record:
    kind: str
    outcome: str  # "ok", "error" or "refused"
    latency_s: float


@dataclass
class Results:
    lock: threading.Lock = field(default_factory=threading.Lock)
    records: list[Record] = field(default_factory=list)
    error_reasons: Counter = field(default_factory=Counter)
    acknowledged: dict[tuple[str, str], str] = field(default_factory=dict)  # (time, sensor): value
    accepted_total: int = 0
    exhausted_threads: int = 0

    def add(self, kind: str, outcome: str, latency_s: float, reason: str = "") -> None:
        with self.lock:
            self.records.append(Record(kind, outcome, latency_s))
            if outcome == "error":
                self.error_reasons[f"{kind}: {reason}"] += 1


class Client:
    """urllib calls to one base URL, each with a timeout; (status, headers, body) or raises."""

    def __init__(self, base: str, token: str | None) -> None:
        self.base = base
        self.token = token

    def call(
        self,
        method: str,
        path: str,
        body: bytes | None = None,
        content_type: str | None = None,
        timeout: float = REQUEST_TIMEOUT_S,
    ) -> tuple[int, dict[str, str], bytes]:
        headers = {"Accept": "application/json"}
        if content_type:
            headers["Content-Type"] = content_type
        if self.token:
            headers["Authorization"] = f"Bearer {self.token}"
        request = urllib.request.Request(
            self.base + path, data=body, headers=headers, method=method
        )
        try:
            with urllib.request.urlopen(request, timeout=timeout) as response:
                return response.status, dict(response.headers), response.read()
        except urllib.error.HTTPError as error:
            with error:
                return error.code, dict(error.headers), error.read()


def classify(status: int, headers: dict[str, str], body: bytes, expected: int) -> tuple[str, str]:
    """("ok" | "refused" | "error", reason) for an HTTP answer."""
    if status == expected:
        return "ok", ""
    if status == 503 and any(k.lower() == "retry-after" for k in headers):
        return "refused", ""
    if status == 422 and b"budget" in body:
        return "refused", ""
    return "error", f"HTTP {status}"


def reading_value(sensor: str, hours: float, rng: random.Random) -> float:
    """A plausible temperature [C] for a sensor some hours after placement, with noise."""
    if sensor == "air":
        value = 15.0 + 5.0 * math.sin(2.0 * math.pi * hours / 24.0)
    else:
        rise = {"T1": 12.0, "T2": 30.0, "T3": 25.0}[sensor]
        value = 20.0 + rise * (1.0 - math.exp(-hours / 20.0))
    return round(value + rng.gauss(0.0, 0.2), 2)


class Worker:
    """One client thread: random requests until the deadline."""

    def __init__(
        self,
        index: int,
        clients: int,
        client: Client,
        pour_id: str,
        placed_at: datetime,
        max_slot_s: int,
        deadline: float,
        results: Results,
        seed: int,
    ) -> None:
        self.index, self.clients = index, clients
        self.client, self.pour_id = client, pour_id
        self.placed_at, self.max_slot_s = placed_at, max_slot_s
        self.deadline, self.results = deadline, results
        self.rng = random.Random(seed * 1000 + index)
        self.next_slot = 0  # this thread's time stamps: placed_at + 1 + index + clients * slot

    def run(self) -> None:
        while time.monotonic() < self.deadline:
            kind = self.rng.choices(KINDS, WEIGHTS)[0]
            if kind == "readings" and not self._has_slots():
                kind = "forecast"  # time stamps used up (a very long run): keep the load
            getattr(self, f"_{kind}")()

    def _timed(
        self,
        kind: str,
        method: str,
        path: str,
        body: bytes | None,
        content_type: str | None,
        check: Callable[[bytes], str] | None = None,
    ) -> bool:
        """Send one request and record it; True when the answer is a 200 that passes ``check``
        (which returns what is wrong with the body, or "")."""
        start = time.perf_counter()
        try:
            status, headers, data = self.client.call(method, path, body, content_type)
        except TimeoutError:
            self.results.add(kind, "error", time.perf_counter() - start, "timeout")
            return False
        except (urllib.error.URLError, OSError) as error:
            reason = getattr(error, "reason", error)
            name = "timeout" if isinstance(reason, TimeoutError) else type(reason).__name__
            self.results.add(kind, "error", time.perf_counter() - start, f"connection: {name}")
            return False
        latency = time.perf_counter() - start
        outcome, reason = classify(status, headers, data, 200)
        if outcome == "ok" and check is not None and (reason := check(data)):
            outcome = "error"
        self.results.add(kind, outcome, latency, reason)
        return outcome == "ok"

    def _forecast(self) -> None:
        scenario = slab(
            thickness_m=round(self.rng.uniform(0.5, 2.5), 2),
            duration_h=self.rng.randint(48, 168),
            placement_c=round(self.rng.uniform(10.0, 25.0), 1),
            air_c=round(self.rng.uniform(5.0, 25.0), 1),
            top_r=round(self.rng.uniform(0.0, 1.0), 2),
        )
        self._timed(
            "forecast", "POST", "/v1/forecasts", json.dumps(scenario).encode(), "application/json"
        )

    def _plan(self) -> None:
        scenario = slab(
            round(self.rng.uniform(0.5, 1.5), 2),
            48,
            placement_c=round(self.rng.uniform(10.0, 25.0), 1),
        )
        payload = {"scenario": scenario, "solve_for": ["max_thickness_m"]}
        self._timed("plan", "POST", "/v1/plans", json.dumps(payload).encode(), "application/json")

    def _status(self) -> None:
        self._timed("status", "GET", f"/v1/pours/{self.pour_id}/status", None, None)

    def _has_slots(self) -> bool:
        last = self.index + self.clients * (self.next_slot + SLOTS_PER_BATCH - 1)
        return last + 1 <= self.max_slot_s

    def _readings(self) -> None:
        rows: dict[tuple[str, str], str] = {}
        out = io.StringIO()
        writer = csv.writer(out, lineterminator="\n")
        writer.writerow(["time", "sensor", "temperature_c"])
        for _ in range(SLOTS_PER_BATCH):
            offset_s = 1 + self.index + self.clients * self.next_slot
            self.next_slot += 1
            moment = self.placed_at + timedelta(seconds=offset_s)
            stamp = moment.strftime("%Y-%m-%dT%H:%M:%SZ")
            for sensor in SENSORS:
                value = f"{reading_value(sensor, offset_s / 3600.0, self.rng):.2f}"
                writer.writerow([stamp, sensor, value])
                rows[(stamp, sensor)] = value
        accepted: list[int] = []

        def check(data: bytes) -> str:
            try:
                report = json.loads(data)
            except ValueError:
                return "200 but not JSON"
            if not isinstance(report, dict) or not isinstance(report.get("accepted"), int):
                return "200 without an accepted count"
            accepted.append(report["accepted"])
            if report["accepted"] != BATCH or report.get("duplicates") or report.get("rejected"):
                return (
                    f"200 but accepted {report['accepted']} of {BATCH}, duplicates "
                    f"{report.get('duplicates')}, rejected {len(report.get('rejected') or [])}"
                )
            return ""

        self._timed(
            "readings",
            "POST",
            f"/v1/pours/{self.pour_id}/readings",
            out.getvalue().encode(),
            "text/csv",
            check,
        )
        if accepted:  # a 200: every reading of the batch is acknowledged
            with self.results.lock:
                self.results.acknowledged.update(rows)
                self.results.accepted_total += accepted[0]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def start_server(port: int, db_path: Path, log_path: Path) -> subprocess.Popen:
    env = {k: v for k, v in os.environ.items() if k not in STRIPPED_ENV}
    env.update({"PORT": str(port), "POURHEAT_DB": str(db_path)})
    with open(log_path, "wb") as log:
        return subprocess.Popen(
            [
                sys.executable,
                "-m",
                "gunicorn",
                "-c",
                "deploy/gunicorn.conf.py",
                "--access-logfile",
                "/dev/null",
                "service.app:create_app()",
            ],
            cwd=ROOT,
            env=env,
            stdin=subprocess.DEVNULL,
            stdout=log,
            stderr=log,
            start_new_session=True,
        )


def wait_healthy(client: Client, server: subprocess.Popen | None) -> None:
    deadline = time.monotonic() + STARTUP_TIMEOUT_S
    while time.monotonic() < deadline:
        if server is not None and server.poll() is not None:
            raise RuntimeError(f"gunicorn exited with code {server.returncode} at start-up")
        try:
            if client.call("GET", "/healthz", timeout=2.0)[0] == 200:
                return
        except OSError:
            pass
        time.sleep(0.2)
    raise RuntimeError(f"/healthz did not answer within {STARTUP_TIMEOUT_S:g} s")


def stop_server(server: subprocess.Popen) -> None:
    """SIGTERM to gunicorn's process group (its own session), SIGKILL if it lingers."""
    with contextlib.suppress(ProcessLookupError):
        os.killpg(server.pid, signal.SIGTERM)
    try:
        server.wait(timeout=SHUTDOWN_TIMEOUT_S)
    except subprocess.TimeoutExpired:
        with contextlib.suppress(ProcessLookupError):
            os.killpg(server.pid, signal.SIGKILL)
        server.wait(timeout=SHUTDOWN_TIMEOUT_S)


def create_pour(client: Client) -> tuple[str, datetime]:
    now = datetime.now(UTC).replace(minute=0, second=0, microsecond=0)
    placed_at = now - timedelta(days=PLACED_DAYS_AGO)
    payload = {
        "name": "load test",
        "placed_at": placed_at.strftime("%Y-%m-%dT%H:%M:%SZ"),
        "scenario": pour_scenario(),
    }
    status, _, body = client.call(
        "POST", "/v1/pours", json.dumps(payload).encode(), "application/json"
    )
    if status != 201:
        raise RuntimeError(f"POST /v1/pours answered {status}: {body[:300]!r}")
    return json.loads(body)["id"], placed_at


def percentile(values: list[float], q: float) -> float:
    """Nearest-rank percentile (q in 0..100) of a non-empty list."""
    ordered = sorted(values)
    rank = max(1, math.ceil(q / 100.0 * len(ordered)))
    return ordered[rank - 1]


def print_table(records: list[Record], elapsed_s: float) -> None:
    header = f"{'kind':<10}{'count':>8}{'errors':>8}{'refused':>9}{'p50 ms':>10}{'p95 ms':>10}"
    print(header + f"{'req/s':>9}")
    print("-" * (len(header) + 9))
    for kind in (*KINDS, "total"):
        rows = records if kind == "total" else [r for r in records if r.kind == kind]
        timed = [1000.0 * r.latency_s for r in rows]
        errors = sum(r.outcome == "error" for r in rows)
        refused = sum(r.outcome == "refused" for r in rows)
        requests = len(rows)
        p50 = f"{percentile(timed, 50):.0f}" if timed else "-"
        p95 = f"{percentile(timed, 95):.0f}" if timed else "-"
        if kind == "total":
            print("-" * (len(header) + 9))
        print(
            f"{kind:<10}{requests:>8}{errors:>8}{refused:>9}{p50:>10}{p95:>10}"
            f"{requests / elapsed_s:>9.1f}"
        )


def check_readings(client: Client, pour_id: str, results: Results) -> tuple[bool, list[str]]:
    """Every acknowledged reading listed exactly once with its value; (ok, report lines)."""
    status, _, body = client.call("GET", f"/v1/pours/{pour_id}/readings", timeout=FINAL_TIMEOUT_S)
    if status != 200:
        return False, [f"readings: GET /v1/pours/{pour_id}/readings answered {status}"]
    listed = Counter()
    values: dict[tuple[str, str], float] = {}
    for r in json.loads(body)["readings"]:
        key = (r["time"], r["sensor"])
        listed[key] += 1
        values[key] = r["temperature_c"]
    acked = results.acknowledged
    lost = [k for k in acked if listed[k] == 0]
    twice = [k for k in acked if listed[k] > 1]
    wrong = [k for k in acked if listed[k] and abs(values[k] - float(acked[k])) > 0.005]
    extra = sum(1 for k in listed if k not in acked)
    lines = [
        f"readings: {len(acked)} acknowledged (reported accepted {results.accepted_total}), "
        f"{sum(listed.values())} listed; lost {len(lost)}, listed more than once {len(twice)}, "
        f"wrong value {len(wrong)}; stored but not acknowledged {extra}",
    ]
    for name, keys in (("lost", lost), ("more than once", twice), ("wrong value", wrong)):
        if keys:
            lines.append(f"  {name}, e.g. {keys[:3]}")
    if results.exhausted_threads:
        lines.append(f"  {results.exhausted_threads} thread(s) ran out of time stamps")
    ok = not lost and not twice and not wrong and results.accepted_total == len(acked)
    return ok, lines


def check_integrity(db_path: Path) -> tuple[bool, str]:
    try:
        db = sqlite3.connect(f"file:{db_path}?mode=ro", uri=True, timeout=10)
        try:
            rows = [row[0] for row in db.execute("PRAGMA integrity_check")]
        finally:
            db.close()
    except sqlite3.Error as error:
        return False, f"integrity: cannot check {db_path}: {error}"
    return rows == ["ok"], f"integrity_check of {db_path.name}: {', '.join(rows[:5])}"


def run(
    args: argparse.Namespace,
    base: str,
    db_path: Path | None,
    server: subprocess.Popen | None,
    log_path: Path | None,
) -> int:
    token = os.environ.get("POURHEAT_TOKEN") if args.url else None
    client = Client(base, token)
    wait_healthy(client, server)
    pour_id, placed_at = create_pour(client)
    max_slot_s = int((datetime.now(UTC) - placed_at).total_seconds()) - 60
    print(f"{base}: pour {pour_id}, {args.clients} clients for {args.seconds:g} s", flush=True)

    results = Results()
    started = time.monotonic()
    deadline = started + args.seconds
    workers = [
        Worker(
            i, args.clients, client, pour_id, placed_at, max_slot_s, deadline, results, args.seed
        )
        for i in range(args.clients)
    ]
    threads = [
        threading.Thread(target=w.run, name=f"load-{i}", daemon=True) for i, w in enumerate(workers)
    ]
    for t in threads:
        t.start()
    for t in threads:  # no request starts after the deadline; one in flight ends by its timeout
        t.join(timeout=max(0.0, deadline - time.monotonic()) + REQUEST_TIMEOUT_S + 5.0)
    stuck = sum(t.is_alive() for t in threads)
    elapsed = time.monotonic() - started
    results.exhausted_threads = sum(not w._has_slots() for w in workers)
    with results.lock:
        records = list(results.records)

    print()
    print_table(records, elapsed)
    print(f"(elapsed {elapsed:.1f} s; latencies over all answered and failed requests)")
    print()
    failed = stuck > 0 or any(r.outcome == "error" for r in records)
    if stuck:
        print(f"threads still running after their bound: {stuck}")
    for reason, n in results.error_reasons.most_common(10):
        print(f"error: {reason} x {n}")
    readings_ok, lines = check_readings(client, pour_id, results)
    print("\n".join(lines))
    failed |= not readings_ok
    if server is not None:
        stop_server(server)
    if db_path is not None:
        integrity_ok, line = check_integrity(db_path)
        print(line)
        failed |= not integrity_ok
    else:
        print("integrity: not checked (give --db with --url)")
    if failed and log_path is not None and log_path.exists():
        tail = log_path.read_text(errors="replace").splitlines()[-20:]
        print("gunicorn log, last lines:\n  " + "\n  ".join(tail))
    print("FAIL" if failed else "PASS")
    return 1 if failed else 0


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--clients", type=int, default=8, help="client threads (1-64)")
    parser.add_argument("--seconds", type=float, default=60.0, help="duration (1-3600)")
    parser.add_argument("--port", type=int, help="port of the spawned gunicorn (default: free)")
    parser.add_argument("--url", help="test this running server instead of spawning one")
    parser.add_argument("--db", type=Path, help="with --url: its SQLite file, for the check")
    parser.add_argument("--seed", type=int, default=1, help="seed of the request mix")
    args = parser.parse_args(argv)
    if not 1 <= args.clients <= 64:
        parser.error("--clients must be 1-64")
    if not 1 <= args.seconds <= 3600:
        parser.error("--seconds must be 1-3600")
    if args.url and args.port:
        parser.error("--port is for the spawned server; give either --url or --port")
    if args.db and not args.url:
        parser.error("--db is only for --url (the spawned server uses a temporary file)")
    if args.url:
        if not args.url.startswith(("http://", "https://")):
            parser.error("--url must start with http:// or https://")
        try:
            return run(args, args.url.rstrip("/"), args.db, None, None)
        except (RuntimeError, OSError) as error:
            print(f"load test aborted: {error}", file=sys.stderr)
            return 1

    with tempfile.TemporaryDirectory(prefix="pourheat-load-") as tmp:
        db_path, log_path = Path(tmp) / "load.sqlite3", Path(tmp) / "gunicorn.log"
        port = args.port or free_port()
        server = start_server(port, db_path, log_path)
        try:
            return run(args, f"http://127.0.0.1:{port}", db_path, server, log_path)
        except (RuntimeError, OSError) as error:
            print(f"load test aborted: {error}", file=sys.stderr)
            if log_path.exists():
                print(log_path.read_text(errors="replace")[-2000:], file=sys.stderr)
            return 1
        finally:
            if server.poll() is None:
                stop_server(server)


if __name__ == "__main__":
    sys.exit(main())
