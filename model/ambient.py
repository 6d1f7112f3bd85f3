"""Weather at the placement: air temperature, wind speed and solar irradiance against time.

Each quantity is a constant, an hourly series starting at placement (held at its last value
after its end, linear between hours), or for air temperature a daily minimum and maximum turned
into a smooth daily cycle.
"""

from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import ArrayLike, NDArray

WARMEST_CLOCK_H = 15.0
"""Clock hour of the daily maximum air temperature [h] (common practice, no source)."""
SUNRISE_CLOCK_H = 6.0
"""Clock hour of sunrise in the daily solar profile [h] (common practice, no source)."""
SUNSET_CLOCK_H = 18.0
"""Clock hour of sunset in the daily solar profile [h] (common practice, no source)."""


def hourly_series(time_h: ArrayLike, values: ArrayLike) -> NDArray[np.float64]:
    """Linear interpolation of hourly values (value i at hour i after placement) [same unit]."""
    v = np.asarray(values, dtype=float)
    return np.interp(np.asarray(time_h, dtype=float), np.arange(v.size, dtype=float), v)


def daily_cycle_c(
    time_h: ArrayLike,
    min_c: float,
    max_c: float,
    placement_clock_h: float,
    warmest_clock_h: float = WARMEST_CLOCK_H,
) -> NDArray[np.float64]:
    """Air temperature from a daily minimum and maximum as a cosine cycle [C].

    Notes
    -----
    ``T = (max + min)/2 + (max - min)/2 cos(2 pi (clock - warmest)/24)``, clock the hour of day;
    the warmest hour defaults to 15:00 (common practice, no source).
    """
    clock = np.asarray(time_h, dtype=float) + placement_clock_h
    phase = 2.0 * np.pi * (clock - warmest_clock_h) / 24.0
    return 0.5 * (max_c + min_c) + 0.5 * (max_c - min_c) * np.cos(phase)


def daily_solar_w_m2(
    time_h: ArrayLike,
    peak_w_m2: float,
    placement_clock_h: float,
    sunrise_clock_h: float = SUNRISE_CLOCK_H,
    sunset_clock_h: float = SUNSET_CLOCK_H,
) -> NDArray[np.float64]:
    """Clear-day irradiance on a horizontal face, a half sine from sunrise to sunset [W/m2]."""
    clock = np.mod(np.asarray(time_h, dtype=float) + placement_clock_h, 24.0)
    day = (clock - sunrise_clock_h) / (sunset_clock_h - sunrise_clock_h)
    return np.where((day > 0) & (day < 1), peak_w_m2 * np.sin(np.pi * np.clip(day, 0, 1)), 0.0)


@dataclass(frozen=True)
class Ambient:
    """Weather against time since placement.

    Attributes
    ----------
    air_c : constant air temperature [C], or hourly values from placement [C]
    daily_min_c, daily_max_c : if both set, they replace ``air_c`` by a daily cycle [C]
    wind_m_s : constant wind speed or hourly values [m/s]
    solar_w_m2 : constant or hourly global irradiance on exposed faces [W/m2]
    solar_peak_w_m2 : if set, a clear-day half-sine profile with this noon value [W/m2]
    placement_clock_h : hour of day at placement, for the daily profiles [h]
    """

    air_c: float | tuple[float, ...] = 20.0
    daily_min_c: float | None = None
    daily_max_c: float | None = None
    wind_m_s: float | tuple[float, ...] = 2.0
    solar_w_m2: float | tuple[float, ...] = 0.0
    solar_peak_w_m2: float | None = None
    placement_clock_h: float = 8.0

    def air_temperature_c(self, time_h: ArrayLike) -> NDArray[np.float64]:
        """Air temperature at the given times since placement [C]."""
        if self.daily_min_c is not None and self.daily_max_c is not None:
            return daily_cycle_c(time_h, self.daily_min_c, self.daily_max_c, self.placement_clock_h)
        return _constant_or_hourly(time_h, self.air_c)

    def shifted(self, delta_c: float) -> "Ambient":
        """The same weather with every air temperature raised by ``delta_c`` [C]."""
        if self.daily_min_c is not None and self.daily_max_c is not None:
            return replace(
                self, daily_min_c=self.daily_min_c + delta_c, daily_max_c=self.daily_max_c + delta_c
            )
        if isinstance(self.air_c, tuple):
            return replace(self, air_c=tuple(t + delta_c for t in self.air_c))
        return replace(self, air_c=self.air_c + delta_c)

    def wind_speed_m_s(self, time_h: ArrayLike) -> NDArray[np.float64]:
        """Wind speed at the given times [m/s]."""
        return _constant_or_hourly(time_h, self.wind_m_s)

    def irradiance_w_m2(self, time_h: ArrayLike) -> NDArray[np.float64]:
        """Global solar irradiance at the given times [W/m2]."""
        if self.solar_peak_w_m2 is not None:
            return daily_solar_w_m2(time_h, self.solar_peak_w_m2, self.placement_clock_h)
        return _constant_or_hourly(time_h, self.solar_w_m2)


def _constant_or_hourly(time_h: ArrayLike, value: float | tuple[float, ...]) -> NDArray:
    if isinstance(value, tuple):
        return hourly_series(time_h, value)
    if isinstance(time_h, float | int):
        return np.float64(value)  # type: ignore[return-value]
    return np.full(np.shape(time_h), float(value))
