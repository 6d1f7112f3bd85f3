"""Progress of ``pourheat forecast`` and ``pourheat plan``: a bar on a terminal (a real pseudo
terminal here), plain lines when standard error is not a terminal, nothing with --quiet. The
delay before progress shows (1 s by default) is set to 0 so that short test runs show it."""

import json
import os
import pty
import subprocess
import sys
from pathlib import Path

from tests.test_cli import SMALL_SCENARIO

ENV = {**os.environ, "POURHEAT_PROGRESS_DELAY_S": "0"}


def _scenario_file(tmp_path: Path) -> str:
    path = tmp_path / "scenario.json"
    path.write_text(json.dumps(SMALL_SCENARIO), encoding="utf-8")
    return str(path)


def _run(*argv: str) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "service.cli", *argv],
        capture_output=True,
        text=True,
        env=ENV,
        timeout=300,
        check=True,
    )


def test_plain_lines_when_not_a_terminal(tmp_path):
    done = _run("forecast", _scenario_file(tmp_path))
    lines = [x for x in done.stderr.splitlines() if x.startswith("forecast:")]
    assert lines[-1].startswith("forecast: 100 % (48 of 48 h")
    assert 5 <= len(lines) <= 10  # one line per tenth of the horizon, at most
    assert "Peak temperature:" in done.stdout and "forecast:" not in done.stdout


def test_plan_counts_forecasts(tmp_path):
    done = _run("plan", _scenario_file(tmp_path), "--solve", "max_placement_temperature_c")
    lines = [x for x in done.stderr.splitlines() if x.startswith("plan:")]
    assert lines and lines[-1].startswith("plan: 100 %")
    assert "forecasts" in lines[-1]


def test_quiet_shows_nothing(tmp_path):
    done = _run("forecast", _scenario_file(tmp_path), "--quiet")
    assert "forecast:" not in done.stderr
    assert "%|" not in done.stderr


def test_a_bar_on_a_terminal(tmp_path):
    main, child = pty.openpty()
    process = subprocess.Popen(
        [sys.executable, "-m", "service.cli", "forecast", _scenario_file(tmp_path)],
        stdin=child,
        stdout=child,
        stderr=child,
        env=ENV,
    )
    os.close(child)
    seen = b""
    while True:
        try:
            chunk = os.read(main, 4096)
        except OSError:  # the terminal closed with the process
            break
        if not chunk:
            break
        seen += chunk
    os.close(main)
    assert process.wait(60) == 0
    text = seen.decode("utf-8", "replace")
    assert "forecast:" in text and "%|" in text  # tqdm's bar on the terminal
    assert "Peak temperature:" in text
