"""Thermal control planning: the value of one control that just keeps a pour inside its limits.

Each search runs whole forecasts and finds where the margin to the limits crosses zero with
``scipy.optimize.brentq``; the answer is then checked so that the returned value meets the
limits and a value one tolerance beyond misses them. When the limits are met (or missed) over
the whole allowed range the result says so instead of returning a bracket end as if it were the
answer. A limit whose verdict is "unsettled" (its maximum near the end of the forecast and still
rising, or a removal's cooling shock not over: see model.results.Forecast.limit_verdict) counts
as not met.
"""

import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Literal

from scipy.optimize import brentq

from model.results import SHOCK_WINDOW_H, Forecast, Summary
from model.scenario import Element, Scenario
from model.solver import forecast

Control = Literal[
    "max_placement_temperature_c",
    "min_top_insulation_r_m2k_w",
    "earliest_insulation_removal_h",
    "max_thickness_m",
]


@dataclass(frozen=True)
class Limits:
    """Limits a plan must keep (common specification values by default; the governing
    specification and the engineer of record decide) [C]."""

    max_temperature_c: float = 70.0
    max_differential_c: float = 19.0


@dataclass(frozen=True)
class ControlSearch:
    """How one control is searched.

    Attributes
    ----------
    low, high : allowed range [unit of the control]
    tolerance : resolution of the answer [unit of the control]
    larger_is_safer : whether the margin grows with the control (True for insulation R and
        removal time, False for placement temperature and thickness)
    """

    low: float
    high: float
    tolerance: float
    larger_is_safer: bool


SEARCHES: dict[str, ControlSearch] = {
    "max_placement_temperature_c": ControlSearch(2.0, 40.0, 0.25, False),
    "min_top_insulation_r_m2k_w": ControlSearch(0.0, 5.0, 0.05, True),
    "earliest_insulation_removal_h": ControlSearch(6.0, math.inf, 1.0, True),
    "max_thickness_m": ControlSearch(0.3, 6.0, 0.05, False),
}
"""Default ranges and tolerances per control [C, m2 K/W, h, m]."""
REMOVAL_WATCH_H = SHOCK_WINDOW_H
"""A removal is only searched up to this long before the end of the forecast [h], so that the
shock after it is inside the forecast."""
UNSETTLED_MARGIN_C = -0.01
"""Margin given to a value whose limit verdict is "unsettled" [C]: below zero, so that it
counts as not met, whatever the margin of its worst value within the forecast."""


@dataclass(frozen=True)
class ControlResult:
    """Outcome of one search.

    Attributes
    ----------
    control : which control
    status : "found"; "met_over_range" (the limits hold over the whole allowed range, value is
        the range end that is most permissive); "missed_over_range" (no value in the range
        meets them, value None); "peak_limit_binds" (for insulation: the R that meets the
        differential makes the peak exceed its limit)
    value : the control value [C, m2 K/W, h or m], or None
    tolerance : resolution of the value [same unit]
    low, high : range searched
    summary : forecast summary at the value (or at the most permissive range end if missed)
    temperature_margin_c, differential_margin_c : limit minus worst forecast value [C]
    forecasts_run : number of whole forecasts the search took
    note : plain-language explanation
    unsettled : why a limit is not settled within the forecast at the value shown (None when
        every limit is settled there)
    """

    control: str
    status: str
    value: float | None
    tolerance: float
    low: float
    high: float
    summary: Summary
    temperature_margin_c: float
    differential_margin_c: float
    forecasts_run: int
    note: str
    unsettled: str | None = None


def margins_c(summary: Summary, limits: Limits) -> tuple[float, float]:
    """Limit minus worst value, for the peak and for the differential [C]."""
    return (
        limits.max_temperature_c - summary.peak_temperature_c,
        limits.max_differential_c - summary.max_differential_c,
    )


def with_control(scenario: Scenario, control: str, value: float) -> Scenario:
    """The scenario with one control set to ``value``."""
    if control == "max_placement_temperature_c":
        return replace(scenario, placement_c=value)
    if control == "max_thickness_m":
        if scenario.element.shape != "slab":
            raise ValueError("max_thickness_m applies to slabs only")
        inside = tuple(s for s in scenario.sensors if s.depth_m <= value)
        return replace(scenario, element=Element("slab", height_m=value), sensors=inside)
    top = scenario.face("top")
    if control == "min_top_insulation_r_m2k_w":
        new_top = replace(top, insulation_r_m2k_w=value)
    elif control == "earliest_insulation_removal_h":
        if top.insulation_r_m2k_w <= 0:
            raise ValueError(
                "earliest_insulation_removal_h needs top insulation "
                "(faces.top.insulation_r_m2k_w > 0)"
            )
        new_top = replace(top, insulation_removal_h=value)
    else:
        raise ValueError(f"unknown control {control!r}; expected one of {sorted(SEARCHES)}")
    return replace(scenario, faces={**scenario.faces, "top": new_top})


def search_range(scenario: Scenario, control: str) -> ControlSearch:
    """The allowed range of a control for this scenario."""
    search = SEARCHES[control]
    if control == "earliest_insulation_removal_h":
        return replace(search, high=scenario.duration_h - REMOVAL_WATCH_H)
    return search


def solve_control(
    scenario: Scenario,
    control: str,
    limits: Limits = Limits(),
    run: Callable[[Scenario], Forecast] = forecast,
) -> ControlResult:
    """Find the most permissive value of ``control`` that keeps ``scenario`` inside ``limits``.

    The margin searched is the smaller of the two limit margins, except for insulation R, where
    only the differential is searched and the peak is then checked (more insulation warms the
    core). Raises ValueError for an unknown control or one that does not apply.
    """
    if control not in SEARCHES:
        raise ValueError(f"unknown control {control!r}; expected one of {sorted(SEARCHES)}")
    search = search_range(scenario, control)
    if search.high <= search.low:
        raise ValueError(
            f"{control}: duration_h is too short to search removal times; it must "
            f"exceed {search.low + REMOVAL_WATCH_H:g} h"
        )
    cache: dict[float, tuple[Summary, str | None]] = {}
    differential_only = control == "min_top_insulation_r_m2k_w"
    watched = {"differential_c": limits.max_differential_c}
    if not differential_only:
        watched["core_c"] = limits.max_temperature_c

    def evaluated(value: float) -> tuple[Summary, str | None]:
        """The summary at ``value`` and why a watched limit is unsettled there (or None)."""
        key = round(value, 9)
        if key not in cache:
            result = run(with_control(scenario, control, value))
            verdicts = [result.limit_verdict(q, limit) for q, limit in watched.items()]
            reasons = [
                f"the {'differential' if q == 'differential_c' else 'peak temperature'}: {v.reason}"
                for q, v in zip(watched, verdicts, strict=True)
                if v.verdict == "unsettled"
            ]
            cache[key] = (result.summary, "; ".join(reasons) or None)
        return cache[key]

    def summary_at(value: float) -> Summary:
        return evaluated(value)[0]

    def margin(value: float) -> float:
        summary, unsettled = evaluated(value)
        temperature, differential = margins_c(summary, limits)
        worst = differential if differential_only else min(temperature, differential)
        return min(worst, UNSETTLED_MARGIN_C) if unsettled else worst

    tol = search.tolerance
    safe_end, risky_end = (
        (search.high, search.low) if search.larger_is_safer else (search.low, search.high)
    )
    direction = -1.0 if search.larger_is_safer else 1.0  # from safe toward risky
    if margin(risky_end) >= 0:
        value, status = risky_end, "met_over_range"
        note = f"the limits hold over the whole range searched ({search.low:g} to {search.high:g})"
    elif margin(safe_end) < 0:
        value, status = None, "missed_over_range"
        note = (
            f"no value from {search.low:g} to {search.high:g} meets the limits; change "
            "another control (placement temperature, mix, insulation, lift size)"
        )
        if control == "earliest_insulation_removal_h":
            note += (
                f"; removals are searched up to {REMOVAL_WATCH_H:g} h before the end of the "
                f"forecast ({scenario.duration_h:g} h), so a longer duration_h may find a later "
                "removal hour that meets them"
            )
        unsettled = evaluated(safe_end)[1]
        if unsettled is not None and min(margins_c(summary_at(safe_end), limits)) >= 0:
            note = (
                f"no value from {search.low:g} to {search.high:g} is shown to meet the limits "
                f"within the forecast: even at {safe_end:g}, {unsettled}; extend duration_h "
                "and plan again"
            )
    else:
        step = direction * tol / 4

        def inside(v: float) -> bool:
            return search.low <= v <= search.high

        value = brentq(margin, search.low, search.high, xtol=tol / 4) - step
        while margin(value) < 0 and inside(value - step):  # back to the safe side
            value -= step
        while inside(value + step) and margin(value + step) >= 0:  # forward to its edge
            value += step
        status, note = "found", "most permissive value that meets the limits"
    shown = value if value is not None else safe_end
    summary, unsettled = evaluated(shown)
    all_ids = {s.id for s in scenario.sensors}
    dropped = sorted(
        {
            i
            for v in cache
            for i in all_ids - {s.id for s in with_control(scenario, control, v).sensors}
        }
    )
    if dropped:
        note += (
            f"; sensors {', '.join(dropped)} lie outside some trial geometries and were left "
            "out of those forecasts (sensors do not change the limits)"
        )
    temperature_margin, differential_margin = margins_c(summary, limits)
    if differential_only and value is not None and temperature_margin < 0:
        status = "peak_limit_binds"
        note = (
            "this R meets the differential limit but the peak then exceeds its limit; "
            "lower the placement temperature or the heat of the mix as well"
        )
    return ControlResult(
        control=control,
        status=status,
        value=None if value is None else round(value, 6),
        tolerance=tol,
        low=search.low,
        high=search.high,
        summary=summary,
        temperature_margin_c=temperature_margin,
        differential_margin_c=differential_margin,
        forecasts_run=len(cache),
        note=note,
        unsettled=unsettled,
    )
