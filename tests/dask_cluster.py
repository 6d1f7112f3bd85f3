"""A real Dask cluster for tests and scripts: ``dask scheduler`` and ``dask worker`` child
processes on loopback ports, working in a temporary folder."""

import os
import socket
import subprocess
import sys
from pathlib import Path

PROJECT_ROOT = Path(__file__).resolve().parents[1]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Cluster:
    """A scheduler and workers in child processes, on loopback ports, in a temporary folder."""

    def __init__(self, folder: str, workers: int = 2) -> None:
        self.folder = folder
        os.makedirs(folder, exist_ok=True)
        self.address = f"tcp://127.0.0.1:{free_port()}"
        env = {**os.environ, "PYTHONPATH": str(PROJECT_ROOT)}
        env.pop("POURHEAT_DASK_SCHEDULER", None)  # workers compute here, never send work on
        port = self.address.rsplit(":", 1)[1]
        common = ["--no-dashboard"]
        self.scheduler = self._start(
            ["scheduler", "--host", "127.0.0.1", "--port", port, *common], env, "scheduler"
        )
        self.workers = [
            self._start(
                [
                    "worker",
                    self.address,
                    "--host",
                    "127.0.0.1",
                    "--nthreads",
                    "1",
                    "--no-nanny",
                    "--name",
                    f"w{i}",
                    "--local-directory",
                    folder,
                    *common,
                ],
                env,
                f"worker{i}",
            )
            for i in range(workers)
        ]
        from distributed import Client

        with Client(self.address, timeout=30, set_as_default=False) as client:
            client.wait_for_workers(workers, timeout=60)

    def _start(self, argv: list[str], env: dict[str, str], name: str) -> subprocess.Popen:
        log = open(os.path.join(self.folder, f"{name}.log"), "w")  # noqa: SIM115 - kept open
        return subprocess.Popen(
            [sys.executable, "-m", "dask", *argv],
            env=env,
            cwd=str(PROJECT_ROOT),
            stdout=log,
            stderr=subprocess.STDOUT,
            start_new_session=True,
        )

    def __enter__(self) -> "Cluster":
        return self

    def __exit__(self, *_exc: object) -> None:
        self.stop()

    def stop(self) -> None:
        for process in [*self.workers, self.scheduler]:
            if process.poll() is None:
                process.terminate()
        for process in [*self.workers, self.scheduler]:
            try:
                process.wait(timeout=10)
            except subprocess.TimeoutExpired:
                process.kill()
