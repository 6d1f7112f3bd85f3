"""Real servers for tests: a throwaway PostgreSQL cluster and gunicorn instances of the app.

Both listen on 127.0.0.1 only, on a free port picked at run time, live in a temporary folder
and are stopped by whoever started them.
"""

import os
import shutil
import socket
import subprocess
import sys
import tempfile
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import gunicorn.config
import requests

REPO = Path(__file__).resolve().parents[1]
POSTGRES_BIN_DIRS = sorted(Path("/usr/lib/postgresql").glob("*/bin"), reverse=True)
"""Where the Debian postgresql package keeps initdb and pg_ctl (not on PATH)."""


def free_port() -> int:
    """A TCP port free on 127.0.0.1 at the moment of asking."""
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def postgres_bin_dir() -> Path | None:
    """The folder holding initdb and pg_ctl: ``pg_config --bindir``, else the newest Debian
    /usr/lib/postgresql/<version>/bin; None if neither has them."""
    found = []
    pg_config = shutil.which("pg_config")
    if pg_config:
        result = subprocess.run([pg_config, "--bindir"], capture_output=True, text=True)
        found.append(Path(result.stdout.strip()))
    found += POSTGRES_BIN_DIRS
    for folder in found:
        if (folder / "initdb").is_file() and (folder / "pg_ctl").is_file():
            return folder
    return None


class PostgresServer:
    """A PostgreSQL cluster made by initdb in a temporary folder and run by pg_ctl on a free
    loopback port (TCP on 127.0.0.1 only; its unix socket in the folder), with trust
    authentication for the superuser ``postgres``. As root, initdb refuses to run, so the
    cluster is made and run as the ``postgres`` system user (created by the Debian package).
    ``fsync=off``: the tests kill clients, never the machine, so flushing to disk only costs
    time on a shared machine."""

    def __init__(self, bin_dir: Path) -> None:
        self.bin_dir = bin_dir
        self.folder = Path(tempfile.mkdtemp(prefix="pourheat-pg-"))
        self.data = self.folder / "data"
        self.port = 0
        self._as_user: list[str] = []
        if os.geteuid() == 0:
            shutil.chown(self.folder, "postgres", "postgres")
            self._as_user = ["runuser", "-u", "postgres", "--"]

    def _run(self, *args: str) -> None:
        subprocess.run([*self._as_user, *args], check=True, capture_output=True, timeout=120)

    def start(self) -> None:
        """initdb, then start the server; a port taken in between is retried with another."""
        self._run(
            str(self.bin_dir / "initdb"), "-D", str(self.data), "-U", "postgres",
            "-A", "trust", "-E", "UTF8", "--no-locale",
        )  # fmt: skip
        for _ in range(3):
            self.port = free_port()
            options = (
                f"-c listen_addresses=127.0.0.1 -p {self.port} -k {self.folder} "
                "-c fsync=off -c max_connections=200"
            )
            try:
                self._run(
                    str(self.bin_dir / "pg_ctl"), "-D", str(self.data), "-l",
                    str(self.folder / "server.log"), "-o", options, "-w", "-t", "60", "start",
                )  # fmt: skip
                return
            except subprocess.CalledProcessError:
                continue
        raise RuntimeError(f"PostgreSQL did not start: {(self.folder / 'server.log').read_text()}")

    @property
    def url(self) -> str:
        """URL of the server's ``postgres`` database."""
        return f"postgresql://postgres@127.0.0.1:{self.port}/postgres"

    def stop(self) -> None:
        """Stop the server (fast shutdown) and remove its folder."""
        try:
            if (self.data / "postmaster.pid").exists():
                self._run(str(self.bin_dir / "pg_ctl"), "-D", str(self.data), "-m", "fast", "-w",
                          "stop")  # fmt: skip
        finally:
            shutil.rmtree(self.folder, ignore_errors=True)


@contextmanager
def gunicorn_server(
    folder: Path, database: str, workers: int = 2, env: dict[str, str] | None = None
) -> Iterator[tuple[str, subprocess.Popen]]:
    """Run ``service.app:create_app()`` under gunicorn on a free loopback port against
    ``database``; yields (base URL, process) once /healthz answers; kills it on leaving."""
    port = free_port()
    log_path = folder / f"gunicorn-{port}.log"
    log = log_path.open("w")
    # gunicorn >= 25 opens a control socket under ~/.gunicorn by default: not in a test
    settings = gunicorn.config.Config().settings
    quiet = ["--no-control-socket"] if "control_socket_disable" in settings else []
    server = subprocess.Popen(
        [sys.executable, "-m", "gunicorn", "-w", str(workers), "-b", f"127.0.0.1:{port}", *quiet,
         "service.app:create_app()"],
        cwd=REPO, env={**os.environ, "POURHEAT_DB": database, **(env or {})}, stdout=log,
        stderr=log, start_new_session=True,
    )  # fmt: skip
    base = f"http://127.0.0.1:{port}"
    try:
        wait_until_healthy(server, base, log_path)
        yield base, server
    finally:
        if server.poll() is None:
            os.killpg(server.pid, 9)
            server.wait(timeout=10)
        log.close()


def wait_until_healthy(process, base: str, log_path, timeout_s: float = 30.0) -> None:
    """Wait until a gunicorn started by a test answers ``/healthz`` (fails, with its log, if the
    process exits or ``timeout_s`` passes)."""
    deadline = time.monotonic() + timeout_s
    while True:
        assert process.poll() is None, Path(log_path).read_text()
        try:
            if requests.get(f"{base}/healthz", timeout=2).status_code == 200:
                return
        except requests.RequestException:
            pass
        assert time.monotonic() < deadline, "gunicorn did not start"
        time.sleep(0.1)
