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
KEPT_STATES_CELLS = 500
"""Grids up to this many cells keep every step's state and reduce them all at once at the end
(a few large array operations instead of many small ones); larger grids reduce each step."""


class Recorder:
    """Collects the diagnostics of every accepted step and builds the Forecast."""

    def __init__(self, solver: ThermalSolver) -> None:
        self.solver = solver
        self.concrete_cells = np.flatnonzero(solver.network.is_concrete)
        volumes = solver.network.volume_m3[self.concrete_cells]
        self.volume_weights = volumes / volumes.sum()
        matrix = solver.sampler.matrix
        self.sample_matrix = matrix.toarray() if np.prod(matrix.shape) <= DENSE_SAMPLES else matrix
        self.time_h: list[float] = []
        self.loss_w: list[float] = []
        self.pending: list[State] = []
        self.keep_states = solver.network.size <= KEPT_STATES_CELLS
        self.reduced: dict[str, list[NDArray[np.float64]]] = {
            name: [] for name in ("core", "coolest", "mean", "core_te", "core_alpha")
        }
        self.reduced["samples"], self.reduced["sample_te"] = [], []

    def add(self, state: State, loss_w: float) -> None:
        self.time_h.append(state.time_h)
        self.loss_w.append(loss_w)
        self.pending.append(state)
        if not self.keep_states:
            self._reduce()

    def _reduce(self) -> None:
        """Hottest, coolest, mean and sampled values of the states not reduced yet."""
        if not self.pending:
            return
        temperature = np.array([s.temperature_c for s in self.pending])
        te = np.array([s.equivalent_age_h for s in self.pending])
        alpha = np.array([s.alpha for s in self.pending])
        self.pending = []
        t_conc = temperature
        if self.concrete_cells.size < temperature.shape[1]:
            t_conc = temperature[:, self.concrete_cells]
        out = self.reduced
        out["core"].append(t_conc.max(axis=1))
        out["coolest"].append(t_conc.min(axis=1))
        out["mean"].append(t_conc @ self.volume_weights)
        # The most mature point: a maximum over fixed points, so it never decreases (the
        # hottest point may move, and its own age jump back and forth with it).
        out["core_te"].append(te[:, self.concrete_cells].max(axis=1))
        out["core_alpha"].append(alpha[:, self.concrete_cells].max(axis=1))
        out["samples"].append((self.sample_matrix @ temperature.T).T)
        out["sample_te"].append((self.sample_matrix @ te.T).T)

    def forecast(self, restarts_h: list[float], energy: EnergyBalance) -> Forecast:
        sc = self.solver.scenario
        sampler = self.solver.sampler
        self._reduce()
        reduced = {name: np.concatenate(values) for name, values in self.reduced.items()}
        time = np.array(self.time_h)
        core = reduced["core"]
        samples = reduced["samples"]
        faces = {name: samples[:, rows].min(axis=1) for name, rows in sampler.face_rows.items()}
        layer = np.concatenate(list(sampler.face_rows.values()))
        surface = samples[:, layer].min(axis=1)
        # Equivalent ages at fixed points, so that they never decrease: each face's is the least
        # of its inset points', and the near-surface one the least over every exposed face.
        sample_te = reduced["sample_te"]
        faces_te = {
            name: sample_te[:, rows].min(axis=1) for name, rows in sampler.face_rows.items()
        }
        surface_te = sample_te[:, layer].min(axis=1)
        differential = core - surface
        coolest = reduced["coolest"]
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
            final_core_equivalent_age_h=float(reduced["core_te"][-1]),
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
            "core_te": reduced["core_te"],
            "surface_te": surface_te,
            "core_alpha": reduced["core_alpha"],
            "mean": reduced["mean"],
            "core_ns": core_ns,
            "surface_ns": surface_ns,
            **{f"face {n}": v for n, v in faces.items()},
            **{f"face te {n}": v for n, v in faces_te.items()},
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
            faces_equivalent_age_h={n: reported[f"face te {n}"] for n in faces_te},
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
