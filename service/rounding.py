"""How many decimals the service reports: one rule for JSON, CSV, text and charts.

The solver's numbers carry more digits than the physics supports, and binary floats print
noise (``494852.00000000006``). Every reported quantity is rounded once, here, by its kind:

- temperatures and temperature differences: 0.01 C (0.01 F in US units);
- times and hours (series times, peak and exceedance times, equivalent ages): 0.01 h;
- degree of hydration: 0.0001; Nurse-Saul factors: 0.1 C h;
- anything else converted or estimated (hydration parameters, US conversions outside the
  summary and series): 6 significant digits;
- plan values: to the decimals of their search tolerance, rounded toward the safe side.
"""

import math
from typing import Any

TEMPERATURE_DIGITS = 2
"""Decimals of temperatures and temperature differences [C or F]."""
HOURS_DIGITS = 2
"""Decimals of times and ages [h]."""
HYDRATION_DEGREE_DIGITS = 4
"""Decimals of the degree of hydration [-]."""
NURSE_SAUL_DIGITS = 1
"""Decimals of the Nurse-Saul temperature-time factor [C h]."""
SIGNIFICANT_DIGITS = 6
"""Significant digits of other reported values."""


def temperature(value: float) -> float:
    """A temperature or temperature difference as reported (0.01)."""
    return round(float(value), TEMPERATURE_DIGITS)


def hours(value: float | None) -> float | None:
    """A time as reported (0.01 h); None stays None."""
    return None if value is None else round(float(value), HOURS_DIGITS)


def significant(value: float, digits: int = SIGNIFICANT_DIGITS) -> float:
    """``value`` to ``digits`` significant digits (no float noise); non-finite kept."""
    if not math.isfinite(value) or value == 0:
        return float(value)
    return float(f"{value:.{digits}g}")


def decimals_of(step: float) -> int:
    """Decimals needed to write ``step`` (0.25 -> 2, 0.05 -> 2, 1 -> 0)."""
    text = f"{step:.10f}".rstrip("0").rstrip(".")
    return len(text.split(".")[1]) if "." in text else 0


def toward_safe(value: float, tolerance: float, larger_is_safer: bool) -> float:
    """A plan value to the decimals of its tolerance, rounded toward the safe side (up when
    larger is safer, down otherwise), so the reported value still meets the limits."""
    scale = 10 ** decimals_of(tolerance)
    shifted = value * scale
    snapped = round(shifted)
    if abs(shifted - snapped) < 1e-6:
        rounded = snapped
    else:
        rounded = math.ceil(shifted) if larger_is_safer else math.floor(shifted)
    return rounded / scale


def csv_cell(value: Any) -> Any:
    """A value as a CSV cell, written as JSON writes it: true/false, empty for null."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if value is None:
        return ""
    return value
