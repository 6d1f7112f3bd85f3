"""Forecast results: the reported series and the summary practitioners read.

Definitions (see the README):

- peak temperature: the hottest point of the concrete at any time, and when;
- near-surface temperature: at each time, the coolest point of the layer ``near_surface_depth_m``
  (default 50 mm) inside every exposed face, interpolated to that depth;
- differential: hottest point minus near-surface temperature; also hottest minus coolest point.
"""

from dataclasses import dataclass, field
from typing import Literal

import numpy as np
from numpy.typing import NDArray
from scipy.interpolate import make_interp_spline

CROSSING_RESOLUTION_H = 0.01
"""Resolution of the first time a limit is exceeded [h]."""
SETTLE_WINDOW_H = 24.0
"""A maximum reached within this long before the end of a forecast is "near the end" [h]: one
daily cycle of the air (common practice, no source)."""
RISING_WINDOW_H = 1.0
"""A quantity is "still rising at the end" when its value at the end exceeds its value this
long before the end [h]."""
PROJECTION_H = 72.0
"""A quantity still rising at the end is projected this far past the end at the rate of its
rise over the last SETTLE_WINDOW_H [h] (three daily cycles; common practice, no source): a
limit it would reach by then is not settled. Forecasts that are not settled are to be extended
by at least this much."""
SHOCK_WINDOW_H = 48.0
"""A removal of insulation or forms this close to the end of a forecast [h] leaves its cooling
shock unfinished: the differential it causes may still grow (common practice, no source; the
removal search of model.planning keeps removals this far from the end too)."""

Verdict = Literal["met", "exceeded", "unsettled"]


@dataclass(frozen=True)
class LimitVerdict:
    """Whether a forecast keeps a limit.

    Attributes
    ----------
    verdict : "exceeded" (the worst value is above the limit), "unsettled" (not above it, but
        not settled within the forecast: the maximum is near the end and still rising, or a
        removal's cooling shock is not over), or "met"
    worst : largest value of the quantity over every solver step [C]
    margin : limit minus worst [C]
    first_exceeded_h : first time the quantity exceeds the limit [h], None if it never does
    reason : why the verdict is "unsettled" (None otherwise)
    """

    verdict: Verdict
    worst: float
    margin: float
    first_exceeded_h: float | None
    reason: str | None = None

    @property
    def met(self) -> bool | None:
        """True only when met; False when exceeded; None when not settled (never True)."""
        return {"met": True, "exceeded": False, "unsettled": None}[self.verdict]


@dataclass(frozen=True)
class Summary:
    """Extremes of a forecast, taken over every solver step (not only the reported times).

    Attributes
    ----------
    peak_temperature_c, peak_time_h : hottest concrete temperature [C] and when [h]
    max_differential_c, max_differential_time_h : largest hottest-minus-near-surface [C], when [h]
    max_spread_c, max_spread_time_h : largest hottest-minus-coolest point [C], when [h]
    min_surface_temperature_c : lowest near-surface temperature [C]
    final_core_equivalent_age_h, final_surface_equivalent_age_h : equivalent age at 21.1 C at the
        end, the greatest of the concrete's points and the least of the near-surface points [h]
    """

    peak_temperature_c: float
    peak_time_h: float
    max_differential_c: float
    max_differential_time_h: float
    max_spread_c: float
    max_spread_time_h: float
    min_surface_temperature_c: float
    final_core_equivalent_age_h: float
    final_surface_equivalent_age_h: float


@dataclass(frozen=True)
class EnergyBalance:
    """Heat budget of the meshed domain over the forecast [J] (per m2 of a slab, per m of a
    section, per meshed part of a block).

    Attributes
    ----------
    generated_j : heat released by hydration
    stored_j : increase of heat stored in concrete and ground
    lost_j : heat that left through the faces (trapezoidal rule on the face heat flows)
    """

    generated_j: float
    stored_j: float
    lost_j: float

    @property
    def relative_imbalance(self) -> float:
        """``(generated - stored - lost) / generated`` [-]."""
        return (self.generated_j - self.stored_j - self.lost_j) / max(abs(self.generated_j), 1e-300)


@dataclass(frozen=True)
class Forecast:
    """Temperature forecast of a placement, on the reporting times.

    Series attributes are arrays on ``time_h`` [h]; temperatures in C, equivalent ages in h,
    Nurse-Saul factors in C h, degrees of hydration dimensionless. ``every_step`` holds
    time_h, core_c, surface_c and differential_c at every solver step, the data of the summary.

    Equivalent ages (Arrhenius, 21.1 C) are integrated at fixed points and never decrease:
    ``surface_equivalent_age_h`` is the least over the points of the near-surface layer of every
    exposed face, ``faces_equivalent_age_h`` the least over each face's own layer,
    ``sensors_equivalent_age_h`` at each sensor; ``core_equivalent_age_h`` (and
    ``core_degree_of_hydration``) is the greatest over the points of the concrete, the most
    mature point, normally the core.
    """

    time_h: NDArray[np.float64]
    core_c: NDArray[np.float64]
    surface_c: NDArray[np.float64]
    differential_c: NDArray[np.float64]
    coolest_c: NDArray[np.float64]
    spread_c: NDArray[np.float64]
    air_c: NDArray[np.float64]
    faces_c: dict[str, NDArray[np.float64]]
    sensors_c: dict[str, NDArray[np.float64]]
    core_equivalent_age_h: NDArray[np.float64]
    surface_equivalent_age_h: NDArray[np.float64]
    core_degree_of_hydration: NDArray[np.float64]
    mean_c: NDArray[np.float64]
    sensors_equivalent_age_h: dict[str, NDArray[np.float64]]
    core_nurse_saul_ch: NDArray[np.float64]
    surface_nurse_saul_ch: NDArray[np.float64]
    summary: Summary
    energy: EnergyBalance
    steps: int
    cells: int
    every_step: dict[str, NDArray[np.float64]]
    restarts_h: tuple[float, ...] = ()
    faces_equivalent_age_h: dict[str, NDArray[np.float64]] = field(default_factory=dict)

    def first_time_above_h(self, quantity: str, limit: float) -> float | None:
        """First time ``quantity`` ("core_c", "surface_c" or "differential_c") exceeds
        ``limit`` [h]; None if it never does at any solver step.

        Found between the last step below the limit and the first above it, on the same
        spline that gives the reported series (to 0.01 h), so it agrees with them."""
        time, values = self.every_step["time_h"], self.every_step[quantity]
        over = np.flatnonzero(values > limit)
        if not over.size:
            return None
        if over[0] == 0:
            return float(time[0])
        fine = np.linspace(
            time[over[0] - 1],
            time[over[0]],
            2 + int(np.ceil((time[over[0]] - time[over[0] - 1]) / CROSSING_RESOLUTION_H)),
        )
        above = np.flatnonzero(dense_output(time, list(self.restarts_h), fine)(values) > limit)
        return float(fine[above[0]])

    def unsettled_reason(self, quantity: str, limit: float, removal_shock: bool) -> str | None:
        """Why the maximum of ``quantity`` ("core_c" or "differential_c") is not settled within
        the forecast with respect to ``limit`` [C], or None when it is.

        Not settled when either (the first that applies is the reason given)

        1. ``removal_shock`` is set (for the differential) and insulation or forms come off
           within the last SHOCK_WINDOW_H (48 h) of the forecast; or
        2. its maximum falls within the last SETTLE_WINDOW_H (24 h) of the forecast, it is still
           rising at the end (the value at the end is above the value RISING_WINDOW_H, 1 h,
           before it), and its rise over the last SETTLE_WINDOW_H, continued for PROJECTION_H
           (72 h) more, would reach ``limit``.
        """
        time, values = self.every_step["time_h"], self.every_step[quantity]
        end = float(time[-1])
        worst_time = float(time[int(np.argmax(values))])
        last = float(values[-1])
        hour_before, day_before = np.interp(
            [end - RISING_WINDOW_H, end - SETTLE_WINDOW_H], time, values
        )
        projected = last + (last - day_before) * PROJECTION_H / SETTLE_WINDOW_H
        late = [t for t in self.restarts_h if t > end - SHOCK_WINDOW_H]
        if removal_shock and late:
            return (
                f"insulation or forms come off at {late[-1]:g} h, less than "
                f"{SHOCK_WINDOW_H:g} h before the end of the forecast ({end:g} h), so the "
                "cooling shock is not over"
            )
        if worst_time >= end - SETTLE_WINDOW_H and last > hour_before and projected >= limit:
            return (
                f"its maximum is at {worst_time:.1f} h, near the end of the forecast "
                f"({end:g} h), and still rising: at the rate of the last {SETTLE_WINDOW_H:g} h "
                f"it would reach the limit by {end + PROJECTION_H:g} h"
            )
        return None

    def limit_verdict(self, quantity: str, limit: float) -> LimitVerdict:
        """The verdict on ``limit`` for ``quantity`` ("core_c" for the peak temperature,
        "differential_c" for the differential, whose removal shocks are watched too) [C]."""
        worst = float(np.max(self.every_step[quantity]))
        first = self.first_time_above_h(quantity, limit)
        if worst > limit:
            return LimitVerdict("exceeded", worst, limit - worst, first)
        reason = self.unsettled_reason(quantity, limit, removal_shock=quantity == "differential_c")
        if reason is not None:
            return LimitVerdict("unsettled", worst, limit - worst, first, reason)
        return LimitVerdict("met", worst, limit - worst, first)


@dataclass(frozen=True)
class BatchForecast:
    """Forecasts of the variants of one scenario stepped together.

    Series are arrays of shape (variants, reported times) on ``time_h`` [h]; summaries have one
    entry per variant and are taken over every solver step. Temperatures in C.
    """

    time_h: NDArray[np.float64]
    core_c: NDArray[np.float64]
    surface_c: NDArray[np.float64]
    differential_c: NDArray[np.float64]
    sensors_c: dict[str, NDArray[np.float64]]
    peak_temperature_c: NDArray[np.float64]
    peak_time_h: NDArray[np.float64]
    max_differential_c: NDArray[np.float64]
    max_differential_time_h: NDArray[np.float64]
    steps: int
    cells: int


def dense_output(
    time_h: NDArray[np.float64], restarts_h: list[float], report_h: NDArray[np.float64]
):
    """Interpolator from values at every step to values at the reported times.

    A cubic interpolating spline (not-a-knot; de Boor 1978) through the step values of each
    stretch between removals at faces, where the solution has a kink; stretches of fewer than
    four steps use the highest order their points allow. Reported times that are step times get
    the step values exactly.
    """
    restarts = np.asarray(restarts_h, dtype=float)
    edges = [0, *np.searchsorted(time_h, restarts - 1e-9).tolist(), time_h.size - 1]
    piece_of_report = np.searchsorted(restarts, report_h - 1e-9)
    pieces = [
        (lo, hi, np.flatnonzero(piece_of_report == i))
        for i, (lo, hi) in enumerate(zip(edges[:-1], edges[1:], strict=True))
    ]

    def at(values: NDArray[np.float64]) -> NDArray[np.float64]:
        out = np.empty(report_h.shape + values.shape[1:])
        for lo, hi, rows in pieces:
            x = time_h[lo : hi + 1]
            spline = make_interp_spline(x, values[lo : hi + 1], k=min(3, x.size - 1), axis=0)
            out[rows] = spline(np.clip(report_h[rows], x[0], x[-1]))
        return out

    return at


def time_of_max(time_h: NDArray[np.float64], values: NDArray[np.float64]) -> tuple[float, float]:
    """The largest value and the first time it occurs: (value, time [h])."""
    i = int(np.argmax(values))
    return float(values[i]), float(time_h[i])
