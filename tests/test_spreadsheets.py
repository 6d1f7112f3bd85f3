"""Spreadsheet clients, for real: LibreOffice Calc (headless) against a running gunicorn.

A Basic macro in a throw-away LibreOffice profile does what a user does in Calc: it links a
sheet to the CSV web-query URL (Sheet > Insert Sheet from File ... > Link, the same link as
Sheet > External Links) and types ``=WEBSERVICE(".../v1/forecasts?...&value=...")`` into a
cell. LibreOffice fetches both with ``Accept: */*`` (what spreadsheets send), so the CSV must be
the default of the GET form. The numbers Calc reads must equal the JSON forecast of the same
query, digit for digit.
"""

import csv
import os
import socket
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path
from urllib.parse import urlencode
from xml.sax.saxutils import escape

import gunicorn.config
import pytest
import requests

from tests.conftest import require_program
from tests.servers import wait_until_healthy

REPO = Path(__file__).resolve().parents[1]
QUERY = {
    "shape": "slab",
    "thickness_m": 1.5,
    "cement_kg_m3": 380,
    "water_kg_m3": 160,
    "placement_c": 20,
    "air_mean_c": 18,
    "air_range_c": 10,
    "top_r_m2k_w": 0.5,
    "duration_h": 72,
    "output_interval_h": 2,
}
"""A 1.5 m mat on the default ground, 72 h: a small web query that runs in a fraction of a
second."""

BASIC = """
Sub Main
  Dim hidden(0) As New com.sun.star.beans.PropertyValue
  hidden(0).Name = "Hidden"
  hidden(0).Value = True
  doc = StarDesktop.loadComponentFromURL("private:factory/scalc", "_blank", 0, hidden())
  cells = doc.Sheets.getByIndex(0)
  quote = Chr(34)
  cells.getCellByPosition(0, 0).setFormula("=WEBSERVICE(" & quote & Environ("CELL_URL") _
    & quote & ")")
  cells.getCellByPosition(1, 0).setFormula("=VALUE(A1)")
  doc.Sheets.insertNewByName("Series", 1)
  series = doc.Sheets.getByName("Series")
  series.link(Environ("CSV_URL"), "", "Text - txt - csv (StarCalc)", "44,34,76,1", _
    com.sun.star.sheet.SheetLinkMode.NORMAL)
  doc.calculateAll()
  Open Environ("OUT_PATH") For Output As #1
  Print #1, "cell," & cells.getCellByPosition(0, 0).getString() & "," & _
    cells.getCellByPosition(1, 0).getValue()
  cursor = series.createCursor()
  cursor.gotoEndOfUsedArea(False)
  For r = 0 To cursor.RangeAddress.EndRow
    line = ""
    For c = 0 To cursor.RangeAddress.EndColumn
      If c > 0 Then line = line & ","
      line = line & series.getCellByPosition(c, r).getString()
    Next c
    Print #1, line
  Next r
  Close #1
  doc.close(True)
  StarDesktop.terminate()
End Sub
"""
"""Calc Basic: a WEBSERVICE cell, a sheet linked to the CSV URL, both written to OUT_PATH."""

MODULE = (
    '<?xml version="1.0" encoding="UTF-8"?>\n'
    '<!DOCTYPE script:module PUBLIC "-//OpenOffice.org//DTD OfficeDocument 1.0//EN" '
    '"module.dtd">\n'
    '<script:module xmlns:script="http://openoffice.org/2000/script" script:name="Module1" '
    f'script:language="StarBasic">{escape(BASIC, {chr(34): "&quot;"})}</script:module>\n'
)
"""The macro as the Basic library file of a LibreOffice profile."""


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture
def server(tmp_path: Path) -> Iterator[str]:
    """gunicorn serving the app on a free loopback port with a temporary database."""
    port = _free_port()
    base = f"http://127.0.0.1:{port}"
    log = (tmp_path / "gunicorn.log").open("w")
    settings = gunicorn.config.Config().settings
    quiet = ["--no-control-socket"] if "control_socket_disable" in settings else []
    process = subprocess.Popen(
        [sys.executable, "-m", "gunicorn", "-w", "2", "-b", f"127.0.0.1:{port}", *quiet,
         "service.app:create_app()"],
        cwd=REPO, env={**os.environ, "POURHEAT_DB": str(tmp_path / "db.sqlite3")},
        stdout=log, stderr=log, start_new_session=True,
    )  # fmt: skip
    try:
        # up to 90 s: importing numpy and scipy on a busy machine
        wait_until_healthy(process, base, tmp_path / "gunicorn.log", timeout_s=90)
        yield base
    finally:
        process.terminate()
        try:
            process.wait(timeout=10)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait(timeout=10)
        log.close()


def _calc(tmp_path: Path, cell_url: str, csv_url: str) -> list[list[str]]:
    """Run the macro in a fresh LibreOffice profile; the rows it wrote."""
    soffice = require_program("soffice", "the spreadsheet test drives LibreOffice Calc")
    profile = tmp_path / "lo-profile"
    installation = f"-env:UserInstallation={profile.as_uri()}"
    env = {**os.environ, "CELL_URL": cell_url, "CSV_URL": csv_url}
    env["OUT_PATH"] = str(tmp_path / "calc.csv")
    # the first start creates the profile (and its default Basic library), which the macro
    # then replaces
    subprocess.run(
        [soffice, installation, "--headless", "--norestore", "--terminate_after_init"],
        env=env, capture_output=True, timeout=120, check=False,
    )  # fmt: skip
    (profile / "user" / "basic" / "Standard" / "Module1.xba").write_text(MODULE, encoding="utf-8")
    run = subprocess.run(
        [soffice, installation, "--headless", "--norestore", "macro:///Standard.Module1.Main"],
        env=env, capture_output=True, text=True, timeout=120, check=False,
    )  # fmt: skip
    out = tmp_path / "calc.csv"
    assert out.exists(), f"LibreOffice wrote nothing: {run.returncode} {run.stderr[-2000:]}"
    return list(csv.reader(out.read_text(encoding="utf-8").splitlines()))


def test_libreoffice_calc_reads_the_web_query_and_a_webservice_cell(server, tmp_path):
    csv_url = f"{server}/v1/forecasts?{urlencode(QUERY)}"
    cell_url = f"{csv_url}&value=peak_temperature_c"
    forecast = requests.get(csv_url, params={"format": "json"}, timeout=60).json()
    rows = _calc(tmp_path, cell_url, csv_url)

    label, text, number = rows[0]
    assert label == "cell"
    assert float(text) == forecast["summary"]["peak_temperature_c"]
    assert float(number) == forecast["summary"]["peak_temperature_c"]

    header, *data = rows[1:]
    assert header[:4] == ["time_h", "core_c", "surface_c", "differential_c"]
    series = forecast["series"]
    assert len(data) == len(series["time_h"]) == 37
    for column, name in enumerate(header):
        if name.startswith("sensor_"):
            continue
        assert [float(row[column]) for row in data] == series[name], name
