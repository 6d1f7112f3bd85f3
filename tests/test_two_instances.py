"""Two gunicorn instances on one PostgreSQL database, as behind a load balancer: readings posted
to either, or the same readings to both at once, are stored once; both report the same status;
a job left running by an instance that was killed is finished by the instance that replaces it.
"""

import os
import signal
import threading
import time
import uuid
from concurrent.futures import ThreadPoolExecutor
from datetime import UTC, datetime, timedelta

import psycopg
import pytest
import requests

from tests.conftest import CONTRACT_SCENARIO
from tests.servers import gunicorn_server

PLACED_AT = (datetime.now(UTC) - timedelta(days=2)).replace(minute=0, second=0, microsecond=0)
SENSORS = [{"id": "S1", "depth_m": 0.05}, {"id": "S2", "depth_m": 1.0}]
SCENARIO = {**CONTRACT_SCENARIO, "sensors": SENSORS}
LONG_JOB = {
    **CONTRACT_SCENARIO,
    "element": {"shape": "block", "length_m": 6.0, "width_m": 4.0, "height_m": 2.0},
    "duration_h": 1500,
}
"""A 3D forecast that runs for several seconds."""


def _rows(first_minute: int, count: int) -> list[dict]:
    return [
        {
            "time": (PLACED_AT + timedelta(minutes=first_minute + i)).isoformat(),
            "sensor": "S1" if i % 2 else "S2",
            "temperature_c": 20.0 + (first_minute + i) / 100,
        }
        for i in range(count)
    ]


@pytest.fixture
def shared_database(postgres_server):
    """A fresh schema in the session's PostgreSQL server, dropped at the end."""
    schema = f"t_{uuid.uuid4().hex[:12]}"
    with psycopg.connect(postgres_server.url, autocommit=True) as admin:
        admin.execute(f"CREATE SCHEMA {schema}")
    yield f"{postgres_server.url}?options=-csearch_path%3D{schema}"
    with psycopg.connect(postgres_server.url, autocommit=True) as admin:
        admin.execute(f"DROP SCHEMA {schema} CASCADE")


def test_two_instances_share_one_database(tmp_path, shared_database):
    jobs_env = {"POURHEAT_JOB_LEASE_S": "5"}
    with (
        gunicorn_server(tmp_path, shared_database, env=jobs_env) as (a, server_a),
        gunicorn_server(tmp_path, shared_database, env={"POURHEAT_JOB_WORKERS": "0"}) as (b, _),
    ):
        created = requests.post(
            f"{a}/v1/pours",
            json={"name": "Mat", "placed_at": PLACED_AT.isoformat(), "scenario": SCENARIO},
            timeout=10,
        )
        assert created.status_code == 201, created.text
        pour = created.json()["id"]

        # alternately: 20 uploads of 30 readings, even ones to A, odd ones to B
        for n in range(20):
            base = a if n % 2 == 0 else b
            answer = requests.post(
                f"{base}/v1/pours/{pour}/readings", json={"readings": _rows(30 * n, 30)}, timeout=10
            ).json()
            assert (answer["accepted"], answer["duplicates"]) == (30, 0), answer

        # at once: the same 8 uploads of 40 new readings sent to both, from 16 threads
        batches = [_rows(600 + 40 * n, 40) for n in range(8)]
        start = threading.Barrier(16)

        def post(base: str, rows: list[dict]) -> dict:
            start.wait(timeout=30)
            response = requests.post(
                f"{base}/v1/pours/{pour}/readings", json={"readings": rows}, timeout=30
            )
            assert response.status_code == 200, response.text
            return response.json()

        with ThreadPoolExecutor(16) as pool:
            answers = list(pool.map(post, [a, b] * 8, [rows for rows in batches for _ in (a, b)]))
        assert sum(x["accepted"] for x in answers) == 8 * 40  # each stored by one of the two
        assert (
            sum(x["duplicates"] for x in answers) == 8 * 40
        )  # and seen as a duplicate by the other
        assert all(x["conflicts"] == 0 for x in answers)

        for base in (a, b):
            stored = requests.get(f"{base}/v1/pours/{pour}/readings", timeout=10).json()["readings"]
            assert len(stored) == 20 * 30 + 8 * 40
            assert len({(r["sensor"], r["time"]) for r in stored}) == len(stored)
        status_a = requests.get(f"{a}/v1/pours/{pour}/status", timeout=60).json()
        status_b = requests.get(f"{b}/v1/pours/{pour}/status", timeout=60).json()
        # "now" is read by each instance when it answers: the clock fields may differ by the
        # seconds between the two requests (and their 0.01 h rounding); everything else is equal
        clock = ("now_h", "latest_reading_age_h")
        for field in clock:
            assert status_a[field] == pytest.approx(status_b[field], abs=0.02)
        assert {k: v for k, v in status_a.items() if k not in clock} == {
            k: v for k, v in status_b.items() if k not in clock
        }
        assert status_a["measured_max_c"] == pytest.approx(20.0 + 919 / 100)
        shown = [requests.get(f"{x}/v1/pours/{pour}", timeout=10).json() for x in (a, b)]
        assert shown[0]["latest_status"] == shown[1]["latest_status"]

        # a job running on A when A is killed is finished by the instance that replaces it
        submitted = requests.post(
            f"{b}/v1/forecasts", json=LONG_JOB, headers={"Prefer": "respond-async"}, timeout=10
        )
        assert submitted.status_code == 202, submitted.text
        location = submitted.headers["Location"]
        deadline = time.monotonic() + 120
        while requests.get(f"{b}{location}", timeout=10).json()["progress"]["simulated_h"] is None:
            assert time.monotonic() < deadline, "the job did not start on A"
            time.sleep(0.2)
        os.killpg(server_a.pid, signal.SIGKILL)  # A's master and workers at once
        server_a.wait(timeout=10)
        assert requests.get(f"{b}{location}", timeout=10).json()["state"] == "running"
        with gunicorn_server(tmp_path, shared_database, env=jobs_env) as (c, _):
            deadline = time.monotonic() + 180
            while (job := requests.get(f"{c}{location}", timeout=10).json())["state"] == "running":
                assert time.monotonic() < deadline, job
                time.sleep(0.5)
        assert job["state"] == "done", job
        assert job["attempts"] == 2
        assert job["progress"]["simulated_h"] == LONG_JOB["duration_h"]
