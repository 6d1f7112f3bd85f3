"""The forecast solver: implicit finite-volume heat conduction with a hydration heat source.

Governing equation (cell-centred finite volumes on the rectilinear grid of :mod:`model.grid`):
``rho c(alpha, T) dT/dt = div(k(alpha) grad T) + Hu Cc d(alpha)/dt``, with the degree of
hydration a function of the Arrhenius equivalent age (Schindler & Folliard 2005).

Time stepping is the variable-step second-order backward differentiation formula (BDF2), which
is L-stable and so free of the ringing Crank-Nicolson shows after a sudden start or a blanket
removal; its first step, and the first after a sudden change at a face, is backward Euler.
Each step solves the coupled temperature / equivalent-age equations by a Newton (chord)
iteration whose matrix, the capacity and conduction matrix plus the derivative of the Arrhenius
heat source, is factorised once per step and reused across iterations. The hydration heat of a
step is ``Hu Cc (alpha_{n+1} - alpha_hist)`` with alpha taken from the equivalent age, so the
heat released over the forecast is exactly ``Hu Cc`` times the change in degree of hydration.
Properties that depend on hydration are evaluated at the state extrapolated to the end of the
step, which keeps second-order accuracy. Step sizes adapt to the change of degree of hydration
and of temperature per step, so the hydration peak is resolved, and land on every insulation or
form removal; reported times between steps are interpolated by a cubic spline through the step
values of each stretch between removals (de Boor 1978, "A Practical Guide to Splines"), so the
reporting interval does not force steps.

References
----------
Hairer, E. and Wanner, G. (1996), "Solving Ordinary Differential Equations II", 2nd ed.,
section III.5 (variable-step BDF) and IV.3 (L-stability).
Schindler, A. K. and Folliard, K. J. (2005), ACI Materials Journal 102(1), 24-33.
"""

import logging
import math
import time
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy.interpolate import make_interp_spline

from model.assembly import (
    DEEP,
    GROUND_FAR,
    GROUND_SURFACE,
    SYMMETRY,
    Network,
    SymmetricPattern,
    boundary_conductance_w_k,
    build_network,
    conduction_diagonal_w_k,
    link_conductance_w_k,
)
from model.boundaries import (
    convection_coefficient_w_m2k,
    radiation_coefficient_w_m2k,
    sol_air_temperature_c,
    surface_conductance_w_m2k,
)
from model.grid import build_domain
from model.hydration import degree_of_hydration, hydration_slope_per_h
from model.linear import LinearSolveError, Solve, factorise, factorise_banded
from model.maturity import arrhenius_factor, arrhenius_factor_slope, nurse_saul_factor_ch
from model.properties import conductivity_w_mk, specific_heat_j_kgk
from model.results import EnergyBalance, Forecast, Summary, time_of_max
from model.sampling import build_sampler
from model.scenario import Face, Scenario

log = logging.getLogger(__name__)

NEWTON_TOLERANCE_C = 1e-6
"""Newton iterations stop when every cell's residual, scaled by its diagonal, is below this [C]."""
MAX_NEWTON_ITERATIONS = 12
STALE_ITERATIONS = 4
"""Newton iterations allowed on a step matrix kept from an earlier step before it is factorised
afresh."""
STALE_MISMATCH = 0.1
"""A factorised step matrix is kept for later steps whose effective step (``gamma``) differs from
its own by at most this fraction; the chord iteration then still contracts quickly."""
STEP_HOLD = (0.9, 1.25)
"""A step stays the same size while the controller's factor lies in this range, so its
factorised matrix can be reused."""
MAX_STEP_GROWTH = 1.5
"""Largest ratio of a step to the previous one (BDF2 is zero-stable below 1 + sqrt(2))."""
REJECT_RATIO = 2.0
"""A step whose change exceeds this multiple of its target is repeated with a smaller step."""
_SECONDS_PER_HOUR = 3600.0


class ConvergenceError(RuntimeError):
    """The nonlinear step could not be solved even with the smallest allowed step."""


class DeadlineExceededError(RuntimeError):
    """The forecast did not finish before its wall-clock deadline."""


@dataclass
class _State:
    time_h: float
    temperature_c: NDArray[np.float64]
    equivalent_age_h: NDArray[np.float64]
    alpha: NDArray[np.float64]


class ThermalSolver:
    """Forecasts one scenario: builds the mesh once, then marches in time.

    Parameters
    ----------
    scenario : the placement, its concrete, faces, ground and weather
    """

    def __init__(self, scenario: Scenario) -> None:
        self.scenario = scenario
        self.domain = build_domain(scenario)
        self.network: Network = build_network(self.domain)
        numbering = np.full(self.domain.material.size, -1, dtype=np.int64)
        numbering[self.network.flat_index] = np.arange(self.network.size)
        self.sampler = build_sampler(scenario, self.domain, numbering)
        self.pattern = SymmetricPattern(self.network)
        concrete = scenario.concrete
        self._is_concrete = self.network.is_concrete
        self._heat_j = np.where(
            self._is_concrete,
            concrete.hydration.total_heat_j_kg
            * concrete.cementitious_kg_m3
            * self.network.volume_m3,
            0.0,
        )
        self._faces = self._face_laws()
        self._factor: tuple[float, Solve] | None = None
        """The last factorised step matrix and its ``gamma_s``, reused while the step holds."""

    # -- material and boundary laws -------------------------------------------------------
    def _face_laws(self) -> dict[str, Face | None]:
        """Boundary label -> Face law (None: fixed deep-ground temperature); adiabatic omitted."""
        laws: dict[str, Face | None] = {}
        for label in self.network.boundaries:
            if label in (SYMMETRY, GROUND_FAR):
                continue
            if label == DEEP:
                laws[label] = None
            elif label == GROUND_SURFACE:
                laws[label] = Face()
            elif not self.scenario.face(label).adiabatic:
                laws[label] = self.scenario.face(label)
        return laws

    def _properties(
        self, alpha: NDArray[np.float64], temperature_c: NDArray[np.float64]
    ) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Conductivity [W/(m K)] and heat capacity [J/K] of every solid cell."""
        concrete, ground = self.scenario.concrete, self.scenario.ground
        conc = self._is_concrete
        if concrete.conductivity_w_mk is not None:
            k_c = np.full(alpha.shape, concrete.conductivity_w_mk)
        else:
            k_c = conductivity_w_mk(alpha, concrete.hardened_conductivity_w_mk)
        if concrete.specific_heat_j_kgk is not None:
            c_c = np.full(alpha.shape, concrete.specific_heat_j_kgk)
        else:
            c_c = specific_heat_j_kgk(alpha, temperature_c, concrete.masses)
        rho_c = concrete.density * c_c
        if ground is None:
            return k_c, rho_c * self.network.volume_m3
        k = np.where(conc, k_c, ground.conductivity_w_mk)
        rho_cp = np.where(conc, rho_c, ground.density_kg_m3 * ground.specific_heat_j_kgk)
        return k, rho_cp * self.network.volume_m3

    def _boundaries(
        self, time_h: float, conductivity: NDArray[np.float64]
    ) -> dict[str, tuple[NDArray[np.float64], float]]:
        """Per active boundary label: face conductances [W/K] and surrounding temperature [C]."""
        amb = self.scenario.ambient
        air = float(amb.air_temperature_c(time_h))
        out: dict[str, tuple[NDArray[np.float64], float]] = {}
        for label, face in self._faces.items():
            faces = self.network.boundaries[label]
            if face is None:
                out[label] = (
                    boundary_conductance_w_k(faces, conductivity, math.inf),
                    self.scenario.ground.deep_temperature_c,
                )  # type: ignore[union-attr]
                continue
            if face.film_coefficient_w_m2k is not None:
                film = face.film_coefficient_w_m2k
            else:
                film = float(
                    convection_coefficient_w_m2k(amb.wind_speed_m_s(time_h))
                    + radiation_coefficient_w_m2k(air, face.emissivity)
                )
            u = face.conductance_factor * float(
                surface_conductance_w_m2k(film, face.resistance_m2k_w(time_h))
            )
            absorbed = face.solar_absorptivity * float(amb.irradiance_w_m2(time_h))
            out[label] = (
                boundary_conductance_w_k(faces, conductivity, u),
                float(sol_air_temperature_c(air, absorbed, film)),
            )
        return out

    def _conduction(
        self, time_h: float, conductivity: NDArray[np.float64]
    ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], dict]:
        """Link conductances and diagonal of K [W/K], boundary load g [W], boundary terms."""
        bounds = self._boundaries(time_h, conductivity)
        links = link_conductance_w_k(self.network, conductivity)
        diag = conduction_diagonal_w_k(self.network, links, {b: g for b, (g, _) in bounds.items()})
        load = np.zeros(self.network.size)
        for label, (g, t_env) in bounds.items():
            load += np.bincount(self.network.boundaries[label].cell, g * t_env, self.network.size)
        return links, diag, load, bounds

    def _heat_loss_w(self, temperature_c: NDArray[np.float64], bounds: dict) -> float:
        """Heat flow out of the domain through all faces [W]."""
        total = 0.0
        for label, (g, t_env) in bounds.items():
            cells = self.network.boundaries[label].cell
            total += float(np.sum(g * (temperature_c[cells] - t_env)))
        return total

    # -- time stepping ---------------------------------------------------------------------
    def _initial_state(self) -> _State:
        sc = self.scenario
        temperature = np.full(self.network.size, sc.placement_c)
        if sc.ground is not None:
            t_ground = (
                sc.ground.initial_temperature_c
                if sc.ground.initial_temperature_c is not None
                else sc.ground.deep_temperature_c
            )
            temperature[~self._is_concrete] = t_ground
        zeros = np.zeros(self.network.size)
        return _State(0.0, temperature, zeros.copy(), zeros.copy())

    def _step(
        self, state: _State, previous: _State | None, step_h: float
    ) -> tuple[_State, NDArray[np.float64], dict] | None:
        """One BDF2 step (backward Euler without history); None if Newton fails."""
        hyd = self.scenario.concrete.hydration
        if previous is None:
            ratio = 0.0
            t_hist, te_hist, a_hist = state.temperature_c, state.equivalent_age_h, state.alpha
            t_pred, a_pred = state.temperature_c, state.alpha
        else:
            ratio = step_h / (state.time_h - previous.time_h)
            c1, c2 = (1.0 + ratio) ** 2 / (1.0 + 2.0 * ratio), ratio**2 / (1.0 + 2.0 * ratio)
            t_hist = c1 * state.temperature_c - c2 * previous.temperature_c
            te_hist = c1 * state.equivalent_age_h - c2 * previous.equivalent_age_h
            a_hist = c1 * state.alpha - c2 * previous.alpha
            t_pred = state.temperature_c + ratio * (state.temperature_c - previous.temperature_c)
            a_pred = np.clip(state.alpha + ratio * (state.alpha - previous.alpha), 0.0, 1.0)
        gamma_h = step_h * (1.0 + ratio) / (1.0 + 2.0 * ratio)
        gamma_s = gamma_h * _SECONDS_PER_HOUR
        time_h = state.time_h + step_h
        conductivity, capacity = self._properties(a_pred, t_pred)
        links, k_diag, load, bounds = self._conduction(time_h, conductivity)
        conc = self._is_concrete

        def hydration(temperature: NDArray[np.float64]):
            rate = arrhenius_factor(temperature, hyd.activation_energy_j_mol)
            te = np.where(conc, te_hist + gamma_h * rate, 0.0)
            alpha = np.where(conc, degree_of_hydration(te, hyd.tau_h, hyd.beta, hyd.alpha_u), 0.0)
            return te, alpha

        def jacobian(temperature: NDArray[np.float64], te: NDArray[np.float64]):
            source = (
                self._heat_j
                * gamma_h
                * hydration_slope_per_h(te, hyd.tau_h, hyd.beta, hyd.alpha_u)
                * arrhenius_factor_slope(temperature, hyd.activation_energy_j_mol)
            )
            diagonal = capacity - source + gamma_s * k_diag
            if self.pattern.tridiagonal:
                return factorise_banded(self.pattern.upper_band(-gamma_s * links, diagonal))
            return factorise(self.pattern.matrix(-gamma_s * links, diagonal))

        temperature = t_pred.copy()
        te, alpha = hydration(temperature)
        # The diagonal of the step matrix turns a residual [J] into a temperature error [C],
        # which decides convergence without another solve.
        diagonal = capacity + gamma_s * k_diag
        try:
            fresh = self._factor is None or abs(gamma_s / self._factor[0] - 1.0) > STALE_MISMATCH
            if fresh:
                self._factor = (gamma_s, jacobian(temperature, te))
            solve = self._factor[1]  # type: ignore[index]
            for iteration in range(2 * MAX_NEWTON_ITERATIONS):
                residual = (
                    capacity * (temperature - t_hist)
                    + gamma_s * (self.pattern.product(-links, k_diag, temperature) - load)
                    - self._heat_j * (alpha - a_hist)
                )
                if np.max(np.abs(residual / diagonal)) < NEWTON_TOLERANCE_C:
                    break
                temperature = temperature - solve(residual)
                te, alpha = hydration(temperature)
                if not np.all(np.isfinite(temperature)):
                    return None
                if iteration + 1 == (MAX_NEWTON_ITERATIONS if fresh else STALE_ITERATIONS):
                    solve = jacobian(temperature, te)
                    self._factor, fresh = (gamma_s, solve), True
            else:
                return None
        except LinearSolveError:
            self._factor = None
            return None
        return _State(time_h, temperature, te, alpha), capacity, bounds

    def _targets(self) -> list[float]:
        """Times the steps must land on: every removal at a face (after which the history
        restarts) and the end of the forecast."""
        sc = self.scenario
        events = {
            t
            for name in sc.element.face_names()
            for t in sc.face(name).removal_times_h()
            if 0.0 < t < sc.duration_h
        }
        return sorted(events) + [sc.duration_h]

    def run(self, deadline: float | None = None) -> Forecast:
        """March from placement to the end of the forecast and summarise.

        ``deadline`` is a ``time.monotonic()`` value after which the run stops with
        :class:`DeadlineExceededError` (a wall-clock cap for services).
        """
        res = self.scenario.settings
        targets = self._targets()
        state, previous = self._initial_state(), None
        conductivity, capacity = self._properties(state.alpha, state.temperature_c)
        heat_rise_c = float(np.max(self._heat_j / capacity))
        bounds = self._boundaries(0.0, conductivity)
        record = _Recorder(self)
        record.add(state, self._heat_loss_w(state.temperature_c, bounds))
        desired, last_step = res.first_step_h, math.inf
        older: _State | None = None
        generated = stored = lost = 0.0
        for target in targets:
            while state.time_h < target - 1e-9:
                if deadline is not None and time.monotonic() > deadline:
                    raise DeadlineExceededError(
                        f"stopped at {state.time_h:.1f} h of {self.scenario.duration_h:g} h: "
                        "the wall-clock cap was reached"
                    )
                cap = min(desired, res.max_step_h, 2.0 * last_step if previous else math.inf)
                remaining = target - state.time_h
                step = remaining / math.ceil(remaining / cap - 1e-9)
                outcome = self._step(state, previous, step)
                change = math.inf
                if outcome is not None:
                    new = outcome[0]
                    change = max(
                        np.max(np.abs(new.alpha - state.alpha)) / res.alpha_change,
                        np.max(np.abs(new.temperature_c - state.temperature_c))
                        / res.temperature_change_c,
                        _error_ratio(
                            new,
                            state,
                            previous,
                            older,
                            res.error_tolerance_c,
                            heat_rise_c,
                            self._is_concrete,
                        )
                        ** (1 / 3),
                    )
                if outcome is None or (change > REJECT_RATIO and step > 1e-3 * res.first_step_h):
                    if step <= 1e-4 * res.first_step_h:
                        raise ConvergenceError(f"no convergence at {state.time_h:.3f} h")
                    desired = step * (0.5 if outcome is None else max(0.2, 0.9 / change))
                    continue
                new, capacity, bounds = outcome
                loss = self._heat_loss_w(new.temperature_c, bounds)
                generated += float(np.sum(self._heat_j * (new.alpha - state.alpha)))
                stored += float(np.sum(capacity * (new.temperature_c - state.temperature_c)))
                lost += 0.5 * (record.loss_w[-1] + loss) * step * _SECONDS_PER_HOUR
                record.add(new, loss)
                older, previous, state, last_step = previous, state, new, step
                factor = min(MAX_STEP_GROWTH, 0.9 / max(change, 1e-6))
                desired = step if STEP_HOLD[0] <= factor < STEP_HOLD[1] else step * factor
            older, previous, desired = None, None, res.first_step_h
        log.debug("forecast: %d cells, %d steps", self.network.size, len(record.time_h) - 1)
        return record.forecast(targets[:-1], EnergyBalance(generated, stored, lost))


def _error_ratio(
    new: _State,
    state: _State,
    previous: _State | None,
    older: _State | None,
    tolerance_c: float,
    heat_rise_c: float,
    cells: NDArray[np.bool_],
) -> float:
    """Estimated local error of a BDF2 step over its tolerance (0 without three past states).

    The estimate is ``C3 / (1 + C3)`` times the gap between the new values and their quadratic
    extrapolation from the three previous steps, ``C3 = 2/9`` being the error constant of BDF2
    (Hairer & Wanner 1996, section III.5; the constant-step value is used for variable steps, as
    is usual). Both temperatures [C] and degrees of hydration are checked, the latter as the
    temperature rise their error would release without losses (``heat_rise_c`` per unit), in
    the ``cells`` reported on (the concrete).
    """
    if previous is None or older is None:
        return 0.0
    t, t0, t1, t2 = new.time_h, state.time_h, previous.time_h, older.time_h
    w0 = (t - t1) * (t - t2) / ((t0 - t1) * (t0 - t2))
    w1 = (t - t0) * (t - t2) / ((t1 - t0) * (t1 - t2))
    w2 = (t - t0) * (t - t1) / ((t2 - t0) * (t2 - t1))
    predicted = w0 * state.temperature_c + w1 * previous.temperature_c + w2 * older.temperature_c
    predicted_alpha = w0 * state.alpha + w1 * previous.alpha + w2 * older.alpha
    gap = max(
        float(np.max(np.abs(new.temperature_c - predicted)[cells])),
        heat_rise_c * float(np.max(np.abs(new.alpha - predicted_alpha)[cells])),
    )
    return (2.0 / 11.0) * gap / tolerance_c


class _Recorder:
    """Collects the diagnostics of every accepted step and builds the Forecast."""

    def __init__(self, solver: ThermalSolver) -> None:
        self.solver = solver
        self.concrete_cells = np.flatnonzero(solver.network.is_concrete)
        volumes = solver.network.volume_m3[self.concrete_cells]
        self.volume_weights = volumes / volumes.sum()
        self.mean: list[float] = []
        self.time_h: list[float] = []
        self.loss_w: list[float] = []
        self.core: list[float] = []
        self.coolest: list[float] = []
        self.samples: list[NDArray[np.float64]] = []
        self.core_te: list[float] = []
        self.core_alpha: list[float] = []
        self.sample_te: list[NDArray[np.float64]] = []

    def add(self, state: _State, loss_w: float) -> None:
        t_conc = state.temperature_c[self.concrete_cells]
        hottest = self.concrete_cells[int(np.argmax(t_conc))]
        self.time_h.append(state.time_h)
        self.loss_w.append(loss_w)
        self.core.append(float(t_conc.max()))
        self.coolest.append(float(t_conc.min()))
        self.mean.append(float(self.volume_weights @ t_conc))
        self.samples.append(self.solver.sampler.matrix @ state.temperature_c)
        self.core_te.append(float(state.equivalent_age_h[hottest]))
        self.core_alpha.append(float(state.alpha[hottest]))
        self.sample_te.append(self.solver.sampler.matrix @ state.equivalent_age_h)

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
        report = _output_times(sc.duration_h, sc.output_interval_h)
        at = _dense_output(time, restarts_h, report)
        return Forecast(
            time_h=report,
            core_c=at(core),
            surface_c=at(surface),
            differential_c=at(differential),
            coolest_c=at(coolest),
            spread_c=at(spread),
            air_c=sc.ambient.air_temperature_c(report),
            faces_c={n: at(v) for n, v in faces.items()},
            sensors_c={s: at(samples[:, row]) for s, row in sampler.sensor_rows.items()},
            core_equivalent_age_h=at(np.array(self.core_te)),
            surface_equivalent_age_h=at(surface_te),
            core_degree_of_hydration=at(np.array(self.core_alpha)),
            mean_c=at(np.array(self.mean)),
            sensors_equivalent_age_h={
                s: at(sample_te[:, row]) for s, row in sampler.sensor_rows.items()
            },
            core_nurse_saul_ch=at(core_ns),
            surface_nurse_saul_ch=at(surface_ns),
            summary=summary,
            energy=energy,
            steps=time.size - 1,
            cells=self.solver.network.size,
            every_step={
                "time_h": time,
                "core_c": core,
                "surface_c": surface,
                "differential_c": differential,
            },
        )


def _dense_output(
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


def _output_times(duration_h: float, interval_h: float) -> NDArray[np.float64]:
    n = int(math.floor(duration_h / interval_h + 1e-9))
    times = interval_h * np.arange(n + 1)
    if times[-1] < duration_h - 1e-9:
        times = np.append(times, duration_h)
    return times


def forecast(scenario: Scenario, deadline: float | None = None) -> Forecast:
    """Forecast a scenario (convenience wrapper around :class:`ThermalSolver`); ``deadline`` as
    for :meth:`ThermalSolver.run`."""
    return ThermalSolver(scenario).run(deadline)
