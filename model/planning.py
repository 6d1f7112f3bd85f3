"""Thermal control planning: the value of one control that just keeps a pour inside its limits.

Each search runs whole forecasts and finds where the margin to the limits crosses zero with
``scipy.optimize.brentq``; the answer is then checked so that the returned value meets the
limits and a value a quarter tolerance beyond misses them. To spend fewer forecasts on the
scenario's own grid, sections and blocks are first searched on a grid twice as coarse in space
and time (about a tenth of the cost in 3D), and the answer is then found on the scenario's own
grid from there: the margin on the coarse grid is offset from the fine one by a nearly constant
grid error, so a forecast at the coarse answer gives that offset, the coarse slope turns it
into an estimate of the crossing, and two checking forecasts around the estimate usually settle
it (a multilevel, or multi-fidelity, search: the coarse model only proposes, the fine model
decides).

When the limits are met (or missed) over the whole allowed range the result says so instead
of returning a bracket end as if it were the answer. A limit whose verdict is "unsettled" (its
maximum near the end of the forecast and still rising, or a removal's cooling shock not over:
see model.results.Forecast.limit_verdict) counts as not met.
"""

import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Literal

from scipy.optimize import brentq

from model.results import SHOCK_WINDOW_H, Forecast, Summary
from model.scenario import Element, Scenario
from model.solver import ConvergenceError, forecast

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
    forecasts_run : number of whole forecasts the search took, on both grids
    coarse_forecasts_run : how many of them ran on the coarse grid (about a tenth of the cost
        each in 3D, a quarter in 2D)
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
    coarse_forecasts_run: int
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


class _Margins:
    """Forecasts of one scenario with one control varied, cached by value, and their margins."""

    def __init__(
        self,
        scenario: Scenario,
        control: str,
        limits: Limits,
        run: Callable[[Scenario], Forecast],
    ) -> None:
        self.scenario, self.control, self.limits, self.run = scenario, control, limits, run
        self.differential_only = control == "min_top_insulation_r_m2k_w"
        self.watched = {"differential_c": limits.max_differential_c}
        if not self.differential_only:
            self.watched["core_c"] = limits.max_temperature_c
        self.cache: dict[float, tuple[Summary, str | None]] = {}

    def evaluated(self, value: float) -> tuple[Summary, str | None]:
        """The summary at ``value`` and why a watched limit is unsettled there (or None)."""
        key = round(value, 9)
        if key not in self.cache:
            result = self.run(with_control(self.scenario, self.control, value))
            verdicts = [result.limit_verdict(q, limit) for q, limit in self.watched.items()]
            reasons = [
                f"the {'differential' if q == 'differential_c' else 'peak temperature'}: {v.reason}"
                for q, v in zip(self.watched, verdicts, strict=True)
                if v.verdict == "unsettled"
            ]
            self.cache[key] = (result.summary, "; ".join(reasons) or None)
        return self.cache[key]

    def __call__(self, value: float) -> float:
        """The margin searched at ``value`` [C]: below zero when the limits are missed."""
        summary, unsettled = self.evaluated(value)
        temperature, differential = margins_c(summary, self.limits)
        worst = differential if self.differential_only else min(temperature, differential)
        return min(worst, UNSETTLED_MARGIN_C) if unsettled else worst


@dataclass(frozen=True)
class _Outcome:
    """Where a search ended: status, value (None if missed over the range) and note."""

    status: str
    value: float | None
    note: str


@dataclass(frozen=True)
class _Hint:
    """A search's outcome on the coarser grid and the slope of its margin there [C per unit
    of the control] (NaN unless a value was found)."""

    outcome: _Outcome
    slope: float
    forecasts_run: int


def _met_over_range(search: ControlSearch, end: float) -> _Outcome:
    return _Outcome(
        "met_over_range",
        end,
        f"the limits hold over the whole range searched ({search.low:g} to {search.high:g})",
    )


def _missed_over_range(
    margin: _Margins, search: ControlSearch, safe_end: float, duration_h: float
) -> _Outcome:
    note = (
        f"no value from {search.low:g} to {search.high:g} meets the limits; change "
        "another control (placement temperature, mix, insulation, lift size)"
    )
    if margin.control == "earliest_insulation_removal_h":
        note += (
            f"; removals are searched up to {REMOVAL_WATCH_H:g} h before the end of the "
            f"forecast ({duration_h:g} h), so a longer duration_h may find a later "
            "removal hour that meets them"
        )
    summary, unsettled = margin.evaluated(safe_end)
    if unsettled is not None and min(margins_c(summary, margin.limits)) >= 0:
        note = (
            f"no value from {search.low:g} to {search.high:g} is shown to meet the limits "
            f"within the forecast: even at {safe_end:g}, {unsettled}; extend duration_h "
            "and plan again"
        )
    return _Outcome("missed_over_range", None, note)


FOUND_NOTE = "most permissive value that meets the limits"


def _ends(search: ControlSearch) -> tuple[float, float, float]:
    """The safe and the risky end of the range, and the direction from safe toward risky."""
    if search.larger_is_safer:
        return search.high, search.low, -1.0
    return search.low, search.high, 1.0


def _bracketed(
    margin: _Margins, search: ControlSearch, duration_h: float, to_edge: bool = True
) -> _Outcome:
    """The search over the whole range: both ends, then Brent's method between them. With
    ``to_edge`` a walk in quarter tolerances follows, so that the value meets and a quarter
    tolerance beyond misses; without, the value is Brent's estimate of the crossing to within
    one tolerance (enough for a coarse search)."""
    safe_end, risky_end, direction = _ends(search)
    if margin(risky_end) >= 0:
        return _met_over_range(search, risky_end)
    if margin(safe_end) < 0:
        return _missed_over_range(margin, search, safe_end, duration_h)
    if not to_edge:
        crossing = brentq(margin, search.low, search.high, xtol=search.tolerance)
        return _Outcome("found", crossing, FOUND_NOTE)
    step = direction * search.tolerance / 4

    def inside(v: float) -> bool:
        return search.low <= v <= search.high

    value = brentq(margin, search.low, search.high, xtol=search.tolerance / 4) - step
    while margin(value) < 0 and inside(value - step):  # back to the safe side
        value -= step
    while inside(value + step) and margin(value + step) >= 0:  # forward to its edge
        value += step
    return _Outcome("found", value, FOUND_NOTE)


def _secant_slope(margin: _Margins, around: float) -> float:
    """Slope of the margin [C per unit of the control] through the two values already
    forecast nearest ``around`` on either side of the crossing (NaN without both sides)."""
    meeting = [v for v in margin.cache if margin(v) >= 0]
    missing = [v for v in margin.cache if margin(v) < 0]
    if not meeting or not missing:
        return math.nan
    a = min(meeting, key=lambda v: abs(v - around))
    b = min(missing, key=lambda v: abs(v - around))
    return (margin(b) - margin(a)) / (b - a)


def _coarse_hint(
    scenario: Scenario,
    control: str,
    limits: Limits,
    run: Callable[[Scenario], Forecast],
    search: ControlSearch,
) -> _Hint | None:
    """The search run to one tolerance on the coarse grid (``Scenario.coarsened``), and the
    slope of its margin at the crossing; None if that grid fails."""
    margin = _Margins(scenario.coarsened(), control, limits, run)
    try:
        outcome = _bracketed(margin, search, scenario.duration_h, to_edge=False)
    except ConvergenceError:
        return None
    slope = math.nan if outcome.value is None else _secant_slope(margin, outcome.value)
    return _Hint(outcome, slope, len(margin.cache))


FINE_ATTEMPTS = 2
"""Pairs of checking forecasts tried on the scenario's own grid before a search from a coarse
answer gives way to the search over the whole range."""


def _from_hint(
    margin: _Margins, search: ControlSearch, hint: _Hint, duration_h: float
) -> _Outcome | None:
    """The answer on the scenario's own grid, started from the coarse grid's: one forecast
    confirms an answer over the whole range; otherwise a forecast at the coarse crossing gives
    the offset between the grids, the coarse slope turns it into an estimate of the crossing,
    and two forecasts a quarter tolerance apart around that estimate must meet and miss (if
    not, the estimate is redone by a secant through the forecasts nearest the crossing). None
    when that does not settle it."""
    safe_end, risky_end, direction = _ends(search)
    status, value = hint.outcome.status, hint.outcome.value
    if status == "met_over_range":
        return _met_over_range(search, risky_end) if margin(risky_end) >= 0 else None
    if status == "missed_over_range":
        if margin(safe_end) < 0:
            return _missed_over_range(margin, search, safe_end, duration_h)
        return None
    slope = hint.slope
    if value is None or not direction * slope < 0:  # the margin must fall toward risk
        return None
    step = direction * search.tolerance / 4
    crossing = value - margin(value) / slope
    for _ in range(FINE_ATTEMPTS):
        meets = crossing - step / 2
        if not search.low <= min(meets, meets + step) <= max(meets, meets + step) <= search.high:
            return None
        if margin(meets) >= 0 and margin(meets + step) < 0:
            return _Outcome("found", meets, FOUND_NOTE)
        slope = _secant_slope(margin, crossing)
        if not direction * slope < 0:
            return None
        nearest = min(margin.cache, key=lambda v: abs(margin(v)))
        crossing = nearest - margin(nearest) / slope
    return None


def solve_control(
    scenario: Scenario,
    control: str,
    limits: Limits = Limits(),
    run: Callable[[Scenario], Forecast] = forecast,
    coarse_first: bool | None = None,
) -> ControlResult:
    """Find the most permissive value of ``control`` that keeps ``scenario`` inside ``limits``.

    The margin searched is the smaller of the two limit margins, except for insulation R, where
    only the differential is searched and the peak is then checked (more insulation warms the
    core). With ``coarse_first`` (by default for sections and blocks, whose forecasts cost
    about a quarter and a tenth as much on the coarse grid; a slab's cost is mostly per step and
    hardly falls) the search first runs on ``scenario.coarsened()``, and the answer on the
    scenario's own grid is then found from there in about three forecasts; whatever that does
    not settle is searched over the whole range as without it. Either way the value returned
    meets the limits on the scenario's own grid and a quarter tolerance beyond misses them (or
    the range end says so). Raises ValueError for an unknown control or one that does not
    apply.
    """
    if control not in SEARCHES:
        raise ValueError(f"unknown control {control!r}; expected one of {sorted(SEARCHES)}")
    search = search_range(scenario, control)
    if search.high <= search.low:
        raise ValueError(
            f"{control}: duration_h is too short to search removal times; it must "
            f"exceed {search.low + REMOVAL_WATCH_H:g} h"
        )
    margin = _Margins(scenario, control, limits, run)
    if coarse_first is None:
        coarse_first = scenario.element.shape != "slab"
    hint = _coarse_hint(scenario, control, limits, run, search) if coarse_first else None
    outcome = None if hint is None else _from_hint(margin, search, hint, scenario.duration_h)
    if outcome is None:
        outcome = _bracketed(margin, search, scenario.duration_h)
    value, status, note = outcome.value, outcome.status, outcome.note
    shown = value if value is not None else _ends(search)[0]
    summary, unsettled = margin.evaluated(shown)
    all_ids = {s.id for s in scenario.sensors}
    dropped = sorted(
        {
            i
            for v in margin.cache
            for i in all_ids - {s.id for s in with_control(scenario, control, v).sensors}
        }
    )
    if dropped:
        note += (
            f"; sensors {', '.join(dropped)} lie outside some trial geometries and were left "
            "out of those forecasts (sensors do not change the limits)"
        )
    temperature_margin, differential_margin = margins_c(summary, limits)
    if margin.differential_only and value is not None and temperature_margin < 0:
        status = "peak_limit_binds"
        note = (
            "this R meets the differential limit but the peak then exceeds its limit; "
            "lower the placement temperature or the heat of the mix as well"
        )
    coarse_runs = 0 if hint is None else hint.forecasts_run
    return ControlResult(
        control=control,
        status=status,
        value=None if value is None else round(value, 6),
        tolerance=search.tolerance,
        low=search.low,
        high=search.high,
        summary=summary,
        temperature_margin_c=temperature_margin,
        differential_margin_c=differential_margin,
        forecasts_run=len(margin.cache) + coarse_runs,
        coarse_forecasts_run=coarse_runs,
        note=note,
        unsettled=unsettled,
    )
