"""Recording a march: the diagnostics of every accepted step, and the reported forecast built
from them (summaries over every step, series interpolated to the reporting times)."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import NDArray

from model.maturity import nurse_saul_factor_ch
from model.results import (
    BatchForecast,
    EnergyBalance,
    Forecast,
    Summary,
    dense_output,
    time_of_max,
)

if TYPE_CHECKING:
    from model.solver import State, ThermalSolver

DENSE_SAMPLES = 200_000
"""Sampling matrices with at most this many entries are applied as dense arrays (faster)."""


class Recorder:
    """Collects the diagnostics of every accepted step and builds the Forecast."""

    def __init__(self, solver: ThermalSolver) -> None:
        self.solver = solver
        self.concrete_cells = np.flatnonzero(solver.network.is_concrete)
        volumes = solver.network.volume_m3[self.concrete_cells]
        self.volume_weights = volumes / volumes.sum()
        matrix = solver.sampler.matrix
        self.sample_matrix = matrix.toarray() if np.prod(matrix.shape) <= DENSE_SAMPLES else matrix
        self.mean: list[float] = []
        self.time_h: list[float] = []
        self.loss_w: list[float] = []
        self.core: list[float] = []
        self.coolest: list[float] = []
        self.samples: list[NDArray[np.float64]] = []
        self.core_te: list[float] = []
        self.core_alpha: list[float] = []
        self.sample_te: list[NDArray[np.float64]] = []

    def add(self, state: State, loss_w: float) -> None:
        t_conc = state.temperature_c
        if self.concrete_cells.size < t_conc.size:
            t_conc = t_conc[self.concrete_cells]
        hottest = self.concrete_cells[int(np.argmax(t_conc))]
        self.time_h.append(state.time_h)
        self.loss_w.append(loss_w)
        self.core.append(float(t_conc.max()))
        self.coolest.append(float(t_conc.min()))
        self.mean.append(float(self.volume_weights @ t_conc))
        self.samples.append(self.sample_matrix @ state.temperature_c)
        self.core_te.append(float(state.equivalent_age_h[hottest]))
        self.core_alpha.append(float(state.alpha[hottest]))
        self.sample_te.append(self.sample_matrix @ state.equivalent_age_h)

    def forecast(self, restarts_h: list[float], energy: EnergyBalance) -> Forecast:
        sc = self.solver.scenario
        sampler = self.solver.sampler
        time = np.array(self.time_h)
        core = np.array(self.core)
        samples = np.array(self.samples)
        faces = {name: samples[:, rows].min(axis=1) for name, rows in sampler.face_rows.items()}
        layer = np.concatenate(list(sampler.face_rows.values()))
        layer_values = samples[:, layer]
        coolest_sample = layer[np.argmin(layer_values, axis=1)]
        surface = layer_values.min(axis=1)
        steps = np.arange(time.size)
        sample_te = np.array(self.sample_te)
        surface_te = sample_te[steps, coolest_sample]
        differential = core - surface
        coolest = np.array(self.coolest)
        spread = core - coolest
        peak, peak_t = time_of_max(time, core)
        dmax, dmax_t = time_of_max(time, differential)
        smax, smax_t = time_of_max(time, spread)
        summary = Summary(
            peak_temperature_c=peak,
            peak_time_h=peak_t,
            max_differential_c=dmax,
            max_differential_time_h=dmax_t,
            max_spread_c=smax,
            max_spread_time_h=smax_t,
            min_surface_temperature_c=float(surface.min()),
            final_core_equivalent_age_h=float(self.core_te[-1]),
            final_surface_equivalent_age_h=float(surface_te[-1]),
        )
        core_ns = nurse_saul_factor_ch(time, core, sc.nurse_saul_datum_c)
        surface_ns = nurse_saul_factor_ch(time, surface, sc.nurse_saul_datum_c)
        report = output_times(sc.duration_h, sc.output_interval_h)
        series = {
            "core": core,
            "surface": surface,
            "differential": differential,
            "coolest": coolest,
            "spread": spread,
            "core_te": np.array(self.core_te),
            "surface_te": surface_te,
            "core_alpha": np.array(self.core_alpha),
            "mean": np.array(self.mean),
            "core_ns": core_ns,
            "surface_ns": surface_ns,
            **{f"face {n}": v for n, v in faces.items()},
            **{f"sensor {s}": samples[:, row] for s, row in sampler.sensor_rows.items()},
            **{f"sensor te {s}": sample_te[:, row] for s, row in sampler.sensor_rows.items()},
        }
        # One spline through all the series at once (columns), then split by name.
        reported = dict(
            zip(
                series,
                dense_output(time, restarts_h, report)(np.column_stack(list(series.values()))).T,
                strict=True,
            )
        )
        return Forecast(
            time_h=report,
            core_c=reported["core"],
            surface_c=reported["surface"],
            differential_c=reported["differential"],
            coolest_c=reported["coolest"],
            spread_c=reported["spread"],
            air_c=sc.ambient.air_temperature_c(report),
            faces_c={n: reported[f"face {n}"] for n in faces},
            sensors_c={s: reported[f"sensor {s}"] for s in sampler.sensor_rows},
            core_equivalent_age_h=reported["core_te"],
            surface_equivalent_age_h=reported["surface_te"],
            core_degree_of_hydration=reported["core_alpha"],
            mean_c=reported["mean"],
            sensors_equivalent_age_h={s: reported[f"sensor te {s}"] for s in sampler.sensor_rows},
            core_nurse_saul_ch=reported["core_ns"],
            surface_nurse_saul_ch=reported["surface_ns"],
            summary=summary,
            energy=energy,
            steps=time.size - 1,
            cells=self.solver.network.size,
            restarts_h=tuple(restarts_h),
            every_step={
                "time_h": time,
                "core_c": core,
                "surface_c": surface,
                "differential_c": differential,
            },
        )


def output_times(duration_h: float, interval_h: float) -> NDArray[np.float64]:
    """The reported times: every ``interval_h`` from 0, and the end [h]."""
    n = int(math.floor(duration_h / interval_h + 1e-9))
    times = interval_h * np.arange(n + 1)
    if times[-1] < duration_h - 1e-9:
        times = np.append(times, duration_h)
    return times


class BatchRecorder:
    """Collects, at every accepted step, the hottest, near-surface and sensor temperatures of
    each variant of a batch (see :meth:`model.solver.ThermalSolver.run_batch`)."""

    def __init__(self, solver: ThermalSolver) -> None:
        self.solver = solver
        self.copies = solver.copies
        self.cells = solver.network.size // solver.copies
        self.concrete = np.flatnonzero(solver.network.is_concrete[: self.cells])
        self.sample_matrix = solver.sampler.matrix.toarray().T
        self.layer = np.concatenate(list(solver.sampler.face_rows.values()))
        self.time_h: list[float] = []
        self.loss_w: list[float] = []
        self.core: list[NDArray[np.float64]] = []
        self.samples: list[NDArray[np.float64]] = []

    def add(self, state: State, loss_w: float) -> None:
        temperature = state.temperature_c.reshape(self.copies, self.cells)
        self.time_h.append(state.time_h)
        self.loss_w.append(loss_w)
        self.core.append(temperature[:, self.concrete].max(axis=1))
        self.samples.append(temperature @ self.sample_matrix)

    def forecast(self, restarts_h: list[float]) -> BatchForecast:
        sc = self.solver.scenario
        time = np.array(self.time_h)
        core = np.array(self.core)
        samples = np.array(self.samples)
        surface = samples[:, :, self.layer].min(axis=2)
        differential = core - surface
        first_peak, first_dmax = np.argmax(core, axis=0), np.argmax(differential, axis=0)
        report = output_times(sc.duration_h, sc.output_interval_h)
        at = dense_output(time, restarts_h, report)
        return BatchForecast(
            time_h=report,
            core_c=at(core).T,
            surface_c=at(surface).T,
            differential_c=at(differential).T,
            sensors_c={
                s: at(samples[:, :, row]).T for s, row in self.solver.sampler.sensor_rows.items()
            },
            peak_temperature_c=core.max(axis=0),
            peak_time_h=time[first_peak],
            max_differential_c=differential.max(axis=0),
            max_differential_time_h=time[first_dmax],
            steps=time.size - 1,
            cells=self.cells,
        )
