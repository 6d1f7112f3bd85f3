"""The forecast solver: implicit finite-volume heat conduction with a hydration heat source.

Governing equation (cell-centred finite volumes on the rectilinear grid of :mod:`model.grid`):
``rho c(alpha, T) dT/dt = div(k(alpha) grad T) + Hu Cc d(alpha)/dt``, with the degree of
hydration a function of the Arrhenius equivalent age (Schindler & Folliard 2005).

Time stepping is the variable-step second-order backward differentiation formula (BDF2), which
is L-stable and so free of the ringing Crank-Nicolson shows after a sudden start or a blanket
removal; its first step, and the first after a sudden change at a face, is backward Euler.
Each step solves the coupled temperature / equivalent-age equations by a Newton iteration
whose matrix is the capacity and conduction matrix plus the derivative of the Arrhenius heat
source. Slabs factorise it once per step (a tridiagonal factorisation costs less than one more
iteration) and iterate on it (a chord iteration); small 2D and 3D grids keep its sparse
factorisation for later steps of the same size until the iteration slows; large grids, solved by
conjugate gradients, rebuild it at every iteration (a true, inexact Newton iteration).
Iterations stop at a hundredth of the step error tolerance (Hairer & Wanner 1996, section
IV.8, advise a stopping tolerance of 0.01-0.1 times it). The hydration heat of a
step is ``Hu Cc (alpha_{n+1} - alpha_hist)`` with alpha taken from the equivalent age, so the
heat released over the forecast is exactly ``Hu Cc`` times the change in degree of hydration.
Properties that depend on hydration are evaluated at the state extrapolated to the end of the
step, which keeps second-order accuracy. Step sizes follow an estimate of the local error of
each step (the gap to a quadratic extrapolation of the last three steps), capped by the change
of degree of hydration and of temperature per step, and land on every insulation or form
removal; reported times between steps are interpolated by a cubic spline through the step
values of each stretch between removals (de Boor 1978, "A Practical Guide to Splines"), so the
reporting interval does not force steps.

References
----------
Hairer, E. and Wanner, G. (1996), "Solving Ordinary Differential Equations II", 2nd ed.,
section III.5 (variable-step BDF) and IV.3 (L-stability).
Schindler, A. K. and Folliard, K. J. (2005), ACI Materials Journal 102(1), 24-33.

Batches
-------
Variants of one slab scenario (placement, air, Hu and tau shifted or scaled; see
:class:`model.scenario.Variations`) are stepped as one network of copies joined by links of zero
area (:func:`model.assembly.replicate`): one step sequence, fine enough for every variant, and
one tridiagonal solve across all of them per iteration.
"""

from __future__ import annotations

import logging
import math
import time
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from numpy.typing import NDArray

from model.assembly import (
    DEEP,
    GROUND_FAR,
    GROUND_SURFACE,
    SYMMETRY,
    Network,
    SymmetricPattern,
    boundary_conductance_w_k,
    build_network,
    link_conductance_w_k,
    link_diagonal_w_k,
    replicate,
)
from model.boundaries import (
    convection_coefficient_w_m2k,
    radiation_coefficient_w_m2k,
    sol_air_temperature_c,
    surface_conductance_w_m2k,
)
from model.grid import build_domain
from model.hydration import degree_of_hydration, hydration_slope_per_h
from model.linear import LinearSolveError, Solve, factorise, factorise_tridiagonal, iterative
from model.maturity import arrhenius_factor, arrhenius_factor_slope
from model.properties import conductivity_w_mk, specific_heat_j_kgk
from model.recording import BatchRecorder, Recorder
from model.results import BatchForecast, EnergyBalance, Forecast
from model.sampling import build_sampler
from model.scenario import Face, Scenario, Variations

log = logging.getLogger(__name__)

NEWTON_TOLERANCE_FRACTION = 0.01
"""Newton iterations stop when every cell's residual, scaled by its diagonal, is below this
fraction of the step error tolerance ``Resolution.error_tolerance_c`` [-] (5e-6 C at the
default settings), and at most ``NEWTON_TOLERANCE_MAX_C``. Measured on the pier example over
48 h: against 1e-6 C it takes 130 instead of 226 solves and moves no series by more than 7e-5 C
from a run solved to 1e-9 C."""
NEWTON_TOLERANCE_MAX_C = 5e-6
"""The loosest Newton tolerance [C], for runs whose step error control is off (fixed steps)."""
MAX_NEWTON_ITERATIONS = 12
STALE_ITERATIONS = 4
"""Newton iterations allowed on a step matrix kept from an earlier step before it is factorised
afresh."""
STEP_LADDER = math.sqrt(2.0)
"""On grids whose factorisations are kept, steps take sizes ``first_step_h * STEP_LADDER**k``
only, so that few distinct step matrices occur and their factorisations can be reused."""
TEMPERATURE_ERROR_FACTOR = 4.0
"""Temperatures may carry this multiple of the error tolerance allowed on the heat released:
an error in the heat feeds back through the Arrhenius rate and grows while the concrete heats
up, whereas an error from the weather at a face is damped (measured: the adiabatic slab needs the
tight heat tolerance; a footing under daily air cycles keeps its accuracy with the looser one
and takes a third fewer steps)."""
KEPT_FACTORISATIONS = 8
"""Factorised step matrices kept for reuse (one per effective step size, the oldest dropped)."""
MAX_STEP_GROWTH = 1.5
"""Largest ratio of a step to the previous one (BDF2 is zero-stable below 1 + sqrt(2))."""
REJECT_RATIO = 2.0
"""A step whose change exceeds this multiple of its target is repeated with a smaller step."""
_SECONDS_PER_HOUR = 3600.0


StepHook = Callable[[float, float], None]
"""Called after each accepted step with (time reached, horizon) [h]."""


class ConvergenceError(RuntimeError):
    """The nonlinear step could not be solved even with the smallest allowed step."""


class DeadlineExceededError(RuntimeError):
    """The forecast did not finish before its wall-clock deadline."""


@dataclass
class State:
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

    def __init__(self, scenario: Scenario, variations: Variations | None = None) -> None:
        self.scenario = scenario
        self.domain = build_domain(scenario)
        single = build_network(self.domain)
        numbering = np.full(self.domain.material.size, -1, dtype=np.int64)
        numbering[single.flat_index] = np.arange(single.size)
        self.sampler = build_sampler(scenario, self.domain, numbering)
        self.variations = variations if variations is not None else Variations.none()
        self.copies = self.variations.size
        self.network: Network = (
            single if variations is None else replicate(single, self.variations.size)
        )
        self.pattern = SymmetricPattern(self.network)
        self._iterative = not self.pattern.tridiagonal and iterative(self.network.size)
        self._reuse = not self.pattern.tridiagonal and not self._iterative
        """Whether the step matrix is solved by conjugate gradients (rebuilt at every Newton
        iteration), and whether its factorisations are kept for later steps (small 2D/3D)."""
        if self.copies > 1 and not self.pattern.tridiagonal:
            raise ValueError("batches of variants are stepped together only for slabs")
        copy_of_cell = np.repeat(np.arange(self.copies), single.size)
        self._copy_of_face = {
            label: faces.cell // single.size for label, faces in self.network.boundaries.items()
        }
        concrete = scenario.concrete
        hyd = concrete.hydration
        self._is_concrete = self.network.is_concrete
        self._has_ground = not bool(np.all(self._is_concrete))
        self._heat_j = np.where(
            self._is_concrete,
            hyd.total_heat_j_kg
            * self.variations.total_heat_factor[copy_of_cell]
            * concrete.cementitious_kg_m3
            * self.network.volume_m3,
            0.0,
        )
        self._tau_h = hyd.tau_h * self.variations.tau_factor[copy_of_cell]
        self._top_factor = self.variations.top_factors()
        self._placement_c = scenario.placement_c + self.variations.placement_shift_c[copy_of_cell]
        self._faces = self._face_laws()
        self._fixed: tuple[NDArray[np.float64], ...] | None = None
        if concrete.conductivity_w_mk is not None and concrete.specific_heat_j_kgk is not None:
            zeros = np.zeros(self.network.size)
            k, capacity = self._properties(zeros, zeros)
            links = link_conductance_w_k(self.network, k)
            self._fixed = (k, capacity, links, link_diagonal_w_k(self.network, links))
        """Conductivity, heat capacity, link conductances and the links' part of the
        conduction diagonal, when they do not change with hydration."""
        self._last_conduction: tuple[tuple, tuple] | None = None
        self._link_matrix = None
        """With fixed properties on 2D/3D grids, the links' off-diagonal part of the conduction
        matrix as a sparse matrix, built once (products with it beat scattering per step)."""
        if self._fixed is not None and not self.pattern.tridiagonal:
            self._link_matrix = self.pattern.matrix(-self._fixed[2], np.zeros(self.network.size))
        self._factors: dict[float, Solve] = {}
        """Factorised step matrices by effective step ``gamma_s``, reused by later steps."""

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
        if self._fixed is not None:
            return self._fixed[0], self._fixed[1]
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
    ) -> dict[str, tuple[NDArray[np.float64], NDArray[np.float64]]]:
        """Per active boundary label: face conductances [W/K] and surrounding temperatures [C]
        (one per face in a batch, else one for all the label's faces)."""
        amb = self.scenario.ambient
        air = float(amb.air_temperature_c(time_h)) + self.variations.air_shift_c
        out: dict[str, tuple[NDArray[np.float64], NDArray[np.float64]]] = {}
        for label, face in self._faces.items():
            faces = self.network.boundaries[label]
            if face is None:
                out[label] = (
                    boundary_conductance_w_k(faces, conductivity, math.inf),
                    np.array([self.scenario.ground.deep_temperature_c]),
                )  # type: ignore[union-attr]
                continue
            # One variant: one air temperature for all faces (broadcast); a batch: per face.
            air_c = air if self.copies == 1 else air[self._copy_of_face[label]]
            if face.film_coefficient_w_m2k is not None:
                film = np.full(air_c.shape, face.film_coefficient_w_m2k)
            else:
                film = convection_coefficient_w_m2k(
                    amb.wind_speed_m_s(time_h)
                ) + radiation_coefficient_w_m2k(air_c, face.emissivity)
            u = face.conductance_factor * surface_conductance_w_m2k(
                film, face.resistance_m2k_w(time_h)
            )
            if label == "top":
                u = u * self._top_factor[self._copy_of_face[label]]
            absorbed = face.solar_absorptivity * float(amb.irradiance_w_m2(time_h))
            out[label] = (
                boundary_conductance_w_k(faces, conductivity, u),
                sol_air_temperature_c(air_c, absorbed, film),
            )
        return out

    def _conduction(
        self, time_h: float, conductivity: NDArray[np.float64]
    ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], dict]:
        """Link conductances and diagonal of K [W/K], boundary load g [W], boundary terms.

        With fixed properties these change only with the weather and the face layers, so the
        last result is reused while those stay the same (steady air, between removals)."""
        if self._fixed is not None:
            amb = self.scenario.ambient
            key = (
                float(amb.air_temperature_c(time_h)),
                float(amb.wind_speed_m_s(time_h)),
                float(amb.irradiance_w_m2(time_h)),
                *(f.resistance_m2k_w(time_h) for f in self._faces.values() if f is not None),
            )
            if self._last_conduction is not None and self._last_conduction[0] == key:
                return self._last_conduction[1]
            value = self._assemble_conduction(time_h, conductivity)
            self._last_conduction = (key, value)
            return value
        return self._assemble_conduction(time_h, conductivity)

    def _assemble_conduction(
        self, time_h: float, conductivity: NDArray[np.float64]
    ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], dict]:
        bounds = self._boundaries(time_h, conductivity)
        if self._fixed is not None:
            links, diag = self._fixed[2], self._fixed[3].copy()
        else:
            links = link_conductance_w_k(self.network, conductivity)
            diag = link_diagonal_w_k(self.network, links)
        load = np.zeros(self.network.size)
        for label, (g, t_env) in bounds.items():
            cells = self.network.boundaries[label].cell  # distinct within a label
            diag[cells] += g
            load[cells] += g * t_env
        return links, diag, load, bounds

    def _heat_loss_w(self, temperature_c: NDArray[np.float64], bounds: dict) -> float:
        """Heat flow out of the domain through all faces [W]."""
        total = 0.0
        for label, (g, t_env) in bounds.items():
            cells = self.network.boundaries[label].cell
            total += float(g @ (temperature_c[cells] - t_env))
        return total

    # -- time stepping ---------------------------------------------------------------------
    def _initial_state(self) -> State:
        sc = self.scenario
        temperature = self._placement_c.copy()
        if sc.ground is not None:
            t_ground = (
                sc.ground.initial_temperature_c
                if sc.ground.initial_temperature_c is not None
                else sc.ground.deep_temperature_c
            )
            temperature[~self._is_concrete] = t_ground
        zeros = np.zeros(self.network.size)
        return State(0.0, temperature, zeros.copy(), zeros.copy())

    def _step(
        self, state: State, previous: State | None, step_h: float, older: State | None = None
    ) -> tuple[State, NDArray[np.float64], dict] | None:
        """One BDF2 step (backward Euler without history); None if Newton fails. Newton starts
        from the temperatures extrapolated through the last two states (three with ``older``)."""
        hyd = self.scenario.concrete.hydration
        if previous is None:
            ratio = 0.0
            t_hist, te_hist, a_hist = state.temperature_c, state.equivalent_age_h, state.alpha
            t_pred = state.temperature_c
        else:
            ratio = step_h / (state.time_h - previous.time_h)
            c1, c2 = (1.0 + ratio) ** 2 / (1.0 + 2.0 * ratio), ratio**2 / (1.0 + 2.0 * ratio)
            t_hist = c1 * state.temperature_c - c2 * previous.temperature_c
            te_hist = c1 * state.equivalent_age_h - c2 * previous.equivalent_age_h
            a_hist = c1 * state.alpha - c2 * previous.alpha
            if older is None:
                t_pred = state.temperature_c + ratio * (
                    state.temperature_c - previous.temperature_c
                )
            else:
                w0, w1, w2 = _extrapolation_weights(state.time_h + step_h, state, previous, older)
                t_pred = (
                    w0 * state.temperature_c
                    + w1 * previous.temperature_c
                    + w2 * older.temperature_c
                )
        gamma_h = step_h * (1.0 + ratio) / (1.0 + 2.0 * ratio)
        gamma_s = gamma_h * _SECONDS_PER_HOUR
        time_h = state.time_h + step_h
        a_pred = state.alpha
        if previous is not None and self._fixed is None:  # properties that follow hydration
            a_pred = np.minimum(np.maximum(a_pred + ratio * (a_pred - previous.alpha), 0.0), 1.0)
        conductivity, capacity = self._properties(a_pred, t_pred)
        links, k_diag, load, bounds = self._conduction(time_h, conductivity)
        conc = self._is_concrete

        def hydration(temperature: NDArray[np.float64]):
            rate[0] = arrhenius_factor(temperature, hyd.activation_energy_j_mol)
            te = te_hist + gamma_h * rate[0]
            alpha = degree_of_hydration(te, self._tau_h, hyd.beta, hyd.alpha_u)
            if self._has_ground:
                return np.where(conc, te, 0.0), np.where(conc, alpha, 0.0)
            return te, alpha

        def jacobian(temperature: NDArray[np.float64], te: NDArray[np.float64]):
            source = (
                self._heat_j
                * gamma_h
                * hydration_slope_per_h(te, self._tau_h, hyd.beta, hyd.alpha_u)
                * arrhenius_factor_slope(temperature, hyd.activation_energy_j_mol, factor=rate[0])
            )
            diagonal = capacity - source + gamma_s * k_diag
            if link_matrix is None:
                return factorise_tridiagonal(diagonal, -gamma_s * links)
            return factorise(self.pattern.shifted(link_matrix, gamma_s, diagonal), diagonal)

        rate = [np.empty(0)]  # the Arrhenius factor at the last temperatures hydration() saw
        temperature = t_pred  # never changed in place
        te, alpha = hydration(temperature)
        link_matrix = self._off_diagonal(links)
        conduct = self._conduction_operator(links, k_diag, link_matrix)
        # The diagonal of the step matrix turns a residual [J] into a temperature error [C],
        # which decides convergence without another solve.
        diagonal = capacity + gamma_s * k_diag
        tolerance_c = min(
            NEWTON_TOLERANCE_FRACTION * self.scenario.settings.error_tolerance_c,
            NEWTON_TOLERANCE_MAX_C,
        )
        key = round(math.log(gamma_s), 9)
        try:
            fresh = not self._reuse or key not in self._factors
            solve = jacobian(temperature, te) if fresh else self._factors[key]
            if self._reuse:
                self._keep(key, solve)
            for iteration in range(2 * MAX_NEWTON_ITERATIONS):
                residual = (
                    capacity * (temperature - t_hist)
                    + gamma_s * (conduct(temperature) - load)
                    - self._heat_j * (alpha - a_hist)
                )
                if np.abs(residual / diagonal).max() < tolerance_c:
                    break
                if self._iterative and iteration > 0:
                    solve = jacobian(temperature, te)
                temperature = temperature - solve(residual)
                te, alpha = hydration(temperature)
                if not np.isfinite(temperature).all():
                    return None
                if iteration + 1 == (MAX_NEWTON_ITERATIONS if fresh else STALE_ITERATIONS):
                    solve, fresh = jacobian(temperature, te), True
                    if self._reuse:
                        self._keep(key, solve)
            else:
                return None
        except LinearSolveError:
            self._factors.pop(key, None)
            return None
        return State(time_h, temperature, te, alpha), capacity, bounds

    def _off_diagonal(self, links: NDArray[np.float64]) -> sp.csr_array | None:
        """On 2D/3D grids, the links' off-diagonal part of the conduction matrix [W/K] (built
        once per step when properties change: a sparse product then costs a quarter of
        scattering the links); None for slabs."""
        if self.pattern.tridiagonal:
            return None
        if self._link_matrix is not None:
            return self._link_matrix
        return self.pattern.matrix(-links, np.zeros(self.network.size))

    def _conduction_operator(
        self,
        links: NDArray[np.float64],
        k_diag: NDArray[np.float64],
        link_matrix: sp.csr_array | None,
    ) -> Callable[[NDArray[np.float64]], NDArray[np.float64]]:
        """The conduction matrix as a product: ``x -> K x`` [W] for temperatures ``x`` [C]."""
        if link_matrix is None:
            return lambda x: self.pattern.tridiagonal_product(-links, k_diag, x)
        return lambda x: k_diag * x + link_matrix @ x

    def _keep(self, key: float, solve: Solve) -> None:
        """Keep a factorised step matrix for reuse, dropping the oldest beyond the limit."""
        self._factors.pop(key, None)
        self._factors[key] = solve
        if len(self._factors) > KEPT_FACTORISATIONS:
            del self._factors[next(iter(self._factors))]

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

    def run(self, deadline: float | None = None, on_step: StepHook | None = None) -> Forecast:
        """March from placement to the end of the forecast and summarise.

        ``deadline`` is a ``time.monotonic()`` value after which the run stops with
        :class:`DeadlineExceededError` (a wall-clock cap for services). ``on_step``, if given,
        is called after every accepted step with the time reached and the horizon [h] (for
        progress reports; it may raise to stop the run).
        """
        record = Recorder(self)
        restarts, energy = self._march(record, deadline, on_step)
        return record.forecast(restarts, energy)

    def run_batch(
        self, deadline: float | None = None, on_step: StepHook | None = None
    ) -> BatchForecast:
        """March all the variants together (one step sequence, fine enough for every one of
        them) and summarise each; ``deadline`` and ``on_step`` as for :meth:`run`."""
        record = BatchRecorder(self)
        restarts, energy = self._march(record, deadline, on_step)
        return record.forecast(restarts)

    def _march(
        self,
        record: Recorder | BatchRecorder,
        deadline: float | None,
        on_step: StepHook | None = None,
    ) -> tuple[list[float], EnergyBalance]:
        """Step from placement to the end, handing every accepted state to ``record``; returns
        the removal times (where the history restarted) and the energy balance."""
        res = self.scenario.settings
        targets = self._targets()
        state, previous = self._initial_state(), None
        conductivity, capacity = self._properties(state.alpha, state.temperature_c)
        heat_rise_c = float(np.max(self._heat_j / capacity))
        bounds = self._boundaries(0.0, conductivity)
        record.add(state, self._heat_loss_w(state.temperature_c, bounds))
        desired, last_step = res.first_step_h, math.inf
        older: State | None = None
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
                # Spread the last two steps before a target evenly; otherwise keep the size.
                step = (
                    cap if remaining > 2.0 * cap else remaining / math.ceil(remaining / cap - 1e-9)
                )
                outcome = self._step(state, previous, step, older)
                change = math.inf
                if outcome is not None:
                    new = outcome[0]
                    change = max(
                        np.abs(new.alpha - state.alpha).max() / res.alpha_change,
                        np.abs(new.temperature_c - state.temperature_c).max()
                        / res.temperature_change_c,
                        _error_ratio(
                            new,
                            state,
                            previous,
                            older,
                            res.error_tolerance_c,
                            heat_rise_c,
                            self._is_concrete if self._has_ground else None,
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
                generated += float(self._heat_j @ (new.alpha - state.alpha))
                stored += float(capacity @ (new.temperature_c - state.temperature_c))
                lost += 0.5 * (record.loss_w[-1] + loss) * step * _SECONDS_PER_HOUR
                record.add(new, loss)
                older, previous, state, last_step = previous, state, new, step
                if on_step is not None:
                    on_step(state.time_h, self.scenario.duration_h)
                desired = step * min(MAX_STEP_GROWTH, 0.9 / max(change, 1e-6))
                if self._reuse:
                    rung = math.floor(math.log(desired / res.first_step_h, STEP_LADDER) + 1e-9)
                    desired = res.first_step_h * STEP_LADDER**rung
            older, previous, desired = None, None, res.first_step_h
        log.debug("forecast: %d cells, %d steps", self.network.size, len(record.time_h) - 1)
        return targets[:-1], EnergyBalance(generated, stored, lost)


def _extrapolation_weights(
    time_h: float, state: State, previous: State, older: State
) -> tuple[float, float, float]:
    """Lagrange weights of the quadratic through the three states, evaluated at ``time_h``."""
    t, t0, t1, t2 = time_h, state.time_h, previous.time_h, older.time_h
    return (
        (t - t1) * (t - t2) / ((t0 - t1) * (t0 - t2)),
        (t - t0) * (t - t2) / ((t1 - t0) * (t1 - t2)),
        (t - t0) * (t - t1) / ((t2 - t0) * (t2 - t1)),
    )


def _error_ratio(
    new: State,
    state: State,
    previous: State | None,
    older: State | None,
    tolerance_c: float,
    heat_rise_c: float,
    cells: NDArray[np.bool_] | None,
) -> float:
    """Estimated local error of a BDF2 step over its tolerance (0 without three past states).

    The estimate is ``C3 / (1 + C3)`` times the gap between the new values and their quadratic
    extrapolation from the three previous steps, ``C3 = 2/9`` being the error constant of BDF2
    (Hairer & Wanner 1996, section III.5; the constant-step value is used for variable steps, as
    is usual). Both temperatures [C] (to ``TEMPERATURE_ERROR_FACTOR`` times the tolerance) and
    degrees of hydration are checked, the latter as the temperature rise their error would
    release without losses (``heat_rise_c`` per unit), in the ``cells`` reported on (the
    concrete; None: all).
    """
    if previous is None or older is None:
        return 0.0
    w0, w1, w2 = _extrapolation_weights(new.time_h, state, previous, older)
    predicted = w0 * state.temperature_c + w1 * previous.temperature_c + w2 * older.temperature_c
    predicted_alpha = w0 * state.alpha + w1 * previous.alpha + w2 * older.alpha
    t_gap, a_gap = np.abs(new.temperature_c - predicted), np.abs(new.alpha - predicted_alpha)
    if cells is not None:
        t_gap, a_gap = t_gap[cells], a_gap[cells]
    gap = max(float(t_gap.max()) / TEMPERATURE_ERROR_FACTOR, heat_rise_c * float(a_gap.max()))
    return (2.0 / 11.0) * gap / tolerance_c


def forecast(
    scenario: Scenario, deadline: float | None = None, on_step: StepHook | None = None
) -> Forecast:
    """Forecast a scenario (convenience wrapper around :class:`ThermalSolver`); ``deadline`` and
    ``on_step`` as for :meth:`ThermalSolver.run`."""
    return ThermalSolver(scenario).run(deadline, on_step)


def forecast_batch(
    scenario: Scenario,
    variations: Variations,
    deadline: float | None = None,
    on_step: StepHook | None = None,
) -> BatchForecast:
    """Forecast the variants of a slab scenario together (see :meth:`ThermalSolver.run_batch`)."""
    return ThermalSolver(scenario, variations).run_batch(deadline, on_step)
