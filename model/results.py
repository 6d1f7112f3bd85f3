"""Forecast results: the reported series and the summary practitioners read.

Definitions (see the README):

- peak temperature: the hottest point of the concrete at any time, and when;
- near-surface temperature: at each time, the coolest point of the layer ``near_surface_depth_m``
  (default 50 mm) inside every exposed face, interpolated to that depth;
- differential: hottest point minus near-surface temperature; also hottest minus coolest point.
"""

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray


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
        end, at the hottest point and at the coolest near-surface point [h]
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

    def first_time_above_h(self, quantity: str, limit: float) -> float | None:
        """First solver time at which ``quantity`` ("core_c", "surface_c" or "differential_c")
        exceeds ``limit``, over every step [h]; None if it never does."""
        over = np.flatnonzero(self.every_step[quantity] > limit)
        return float(self.every_step["time_h"][over[0]]) if over.size else None


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


def time_of_max(time_h: NDArray[np.float64], values: NDArray[np.float64]) -> tuple[float, float]:
    """The largest value and the first time it occurs: (value, time [h])."""
    i = int(np.argmax(values))
    return float(values[i]), float(time_h[i])
