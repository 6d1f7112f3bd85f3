"""Print the README's examples table: each scenario in examples/ forecast with the default
settings (as `pourheat forecast examples/NAME.json` does), its peak, maximum differential and
limit verdicts.

    .venv/bin/python scripts/examples_table.py
"""

import json
import os
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")

from service.forecasting import run_forecast  # noqa: E402

DESCRIPTIONS = {
    "mat-foundation.json": "2.4 m mat, 280 kg/m3 Type II + 120 fly ash, on soil, blanket R 0.9 "
    "off at 168 h, warm days with sun",
    "pier-footing-on-rock.json": "9 x 6 x 2.5 m block, 300 cement + 150 slag, on rock at 12 C, "
    "insulated top and sides",
    "retaining-wall-cold-weather.json": "0.6 x 4.5 m wall, Type III, -8 to 2 C air, forms and "
    "blankets off at 120 h",
}
"""What each invented example is (written by hand; the numbers are computed)."""


def verdict(name: str, status: dict) -> str:
    """One limit's verdict in words."""
    if status["verdict"] == "met":
        return f"{name} met"
    if status["verdict"] == "unsettled":
        return f"{name} not settled within the forecast"
    return f"{name} exceeded from {status['first_exceeded_h']:g} h"


def row(path: Path) -> str:
    _, body = run_forecast(json.loads(path.read_text()), max_cell_steps=1e12)
    s = body["summary"]
    limits = s["limits"]
    return (
        f"| `{path.name}`: {DESCRIPTIONS[path.name]} | {s['peak_temperature_c']:.1f} C at "
        f"{s['peak_time_h']:g} h | {s['max_differential_c']:.1f} C at "
        f"{s['max_differential_time_h']:g} h | "
        f"{verdict('peak', limits['max_temperature_c'])}; "
        f"{verdict('differential', limits['max_differential_c'])} |"
    )


def main() -> None:
    print("| example | peak | max differential | limits (70 C, 19 C) |")
    print("| --- | --- | --- | --- |")
    for path in sorted((ROOT / "examples").glob("*.json")):
        print(row(path), flush=True)


if __name__ == "__main__":
    main()
