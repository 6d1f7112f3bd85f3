"""Independent method-of-lines reference for a hydrating footing section on the ground (2D).

The half section (symmetry plane x = 0) of a 4 m wide x 3 m tall concrete footing resting on a
3 m ground layer that extends 3 m beyond the footing side is discretised with a **uniform grid
of square cell-centred finite volumes** (side ``cell_m``) over the L-shaped solid domain. The
resulting ODE system is integrated with :func:`scipy.integrate.solve_ivp` (BDF, analytic sparse
Jacobian). Nothing from the project's ``model`` or ``service`` packages is used: numpy, scipy
and the hydration and Arrhenius functions of the 1D reference, tests/reference/mol.py.

Units
-----
The independent variable and the equivalent age are both in **hours**: t [h], t_e [h]. Heat
flows are in W per metre of footing length and are converted to K/h with the factor 3600 s/h.
Temperatures are in degC, lengths in m.

Geometry (x across from the symmetry plane, z up from the concrete/ground interface)
-----------------------------------------------------------------------------------
* concrete: 0 <= x <= 2, 0 <= z <= 3;   ground: 0 <= x <= 5, -3 <= z <= 0;
* void (not meshed): 2 < x <= 5, 0 < z <= 3.

Model
-----
* Heat equation (constant properties per material)::

      rho c dT/dt = div(k grad T) + q,    q = Hu Cc d(alpha)/dt  [W/m3] (concrete only)

* Degree of hydration, exponential model (Schindler, A. K. and Folliard, K. J., "Heat of
  hydration models for cementitious materials", ACI Materials Journal 102(1), 2005,
  pp. 24-33)::

      alpha(t_e) = alpha_u exp(-(tau / t_e)^beta),   alpha(0) = 0
      d(alpha)/dt = alpha beta / t_e (tau / t_e)^beta dt_e/dt

* Equivalent age at the reference temperature 21.1 degC (Arrhenius function of Freiesleben
  Hansen, P. and Pedersen, E. J., "Maturity computer for controlled curing and hardening of
  concrete", Nordisk Betong 1, 1977, pp. 19-34; as adopted in ASTM C1074)::

      dt_e/dt = exp(-Ea/R (1/(T + 273.15) - 1/(21.1 + 273.15))),   R = 8.314 J/(mol K)

  With t_e(0) = 0, alpha and all its derivatives vanish at t_e = 0; the hydration and
  Arrhenius functions are those of the 1D reference (tests/reference/mol.py), evaluated in
  logarithmic form so the start gives exact zeros rather than 0 * inf.

* Air temperature (daily cycle, placement at 08:00, warmest at 15:00)::

      T_air(t) = 15 + 7 cos(2 pi (t + 8 - 15) / 24)   [degC]

* Film coefficient h(t) = h_c + h_r(t), h_c = 2.8 + 3.0 * 3.0 = 11.8 W/(m2 K) (wind 3 m/s),
  h_r = 4 eps sigma (T_air + 273.15)^3 with eps = 0.9 (radiation linearised at T_air).
  A face with a layer of resistance R [m2 K/W] has U = 1 / (R + 1/h): insulated concrete top
  R = 0.5, formed concrete side R = 0.15, bare ground surface beside the footing R = 0.

* Finite-volume fluxes (per metre of footing length, cell side d): between two cells
  d (T2 - T1) / (d/(2 k1) + d/(2 k2)) (perfect contact at the concrete/ground interface); from
  a boundary cell d (T_env - T) / (d/(2k) + 1/U), with 1/U = 0 for the fixed 12 degC ground
  bottom at z = -3. The symmetry plane x = 0 and the far ground side x = 5 are adiabatic.
  Source: Patankar, S. V., *Numerical Heat Transfer and Fluid Flow*, Hemisphere, 1980,
  chapter 4 (harmonic-mean interface conductance, boundary resistances in series).

The boundary conductances depend on t only (through T_air), so the conduction part of the
Jacobian is constant apart from its boundary diagonal, which is re-evaluated at each call.

Performance note: beyond about 10^4 unknowns (cells of 0.05 m or less) a multi-threaded
OpenBLAS may slow the integrator's vector norms badly on small machines; setting
OPENBLAS_NUM_THREADS=1 avoids this (0.05 m cells, rtol 1e-6: about 2.5 s instead of 15 s).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray
from scipy import sparse
from scipy.integrate import solve_ivp

from tests.reference.mol import arrhenius_rate, hydration_rates

__all__ = [
    "air_temperature_c",
    "film_coefficient_w_m2k",
    "footing_on_ground",
]

STEFAN_BOLTZMANN_W_M2K4 = 5.670374419e-8
"""Stefan-Boltzmann constant [W/(m2 K4)]."""

_KELVIN = 273.15
_SECONDS_PER_HOUR = 3600.0

# --- Case data (spec "2D benchmark case: footing section on a ground layer") -----------------
CONCRETE_HALF_WIDTH_M = 2.0
CONCRETE_HEIGHT_M = 3.0
GROUND_WIDTH_M = 5.0
GROUND_DEPTH_M = 3.0

CONCRETE_CONDUCTIVITY_W_MK = 2.5
CONCRETE_DENSITY_KG_M3 = 2400.0
CONCRETE_SPECIFIC_HEAT_J_KGK = 1000.0
GROUND_CONDUCTIVITY_W_MK = 1.5
GROUND_DENSITY_KG_M3 = 1900.0
GROUND_SPECIFIC_HEAT_J_KGK = 900.0

CEMENTITIOUS_KG_M3 = 380.0
HU_J_KG = 460000.0
TAU_H = 13.0
BETA = 0.9
ALPHA_U = 0.75
ACTIVATION_ENERGY_J_MOL = 41000.0

PLACEMENT_C = 18.0
GROUND_INITIAL_C = 12.0
GROUND_BOTTOM_C = 12.0
AIR_MEAN_C = 15.0
AIR_AMPLITUDE_C = 7.0
PLACEMENT_CLOCK_H = 8.0
WARMEST_CLOCK_H = 15.0

WIND_M_S = 3.0
CONVECTION_W_M2K = 2.8 + 3.0 * WIND_M_S
"""Convective film coefficient h_c = 2.8 + 3.0 v [W/(m2 K)] (= 11.8 at 3 m/s)."""
EMISSIVITY = 0.9

TOP_RESISTANCE_M2K_W = 0.5
SIDE_RESISTANCE_M2K_W = 0.15
GROUND_SURFACE_RESISTANCE_M2K_W = 0.0

TOP_SENSOR_XZ_M = (0.0, 2.95)
SIDE_SENSOR_XZ_M = (1.95, 1.5)


def air_temperature_c(
    t_h: float | NDArray[np.float64],
    mean_c: float = AIR_MEAN_C,
    amplitude_c: float = AIR_AMPLITUDE_C,
) -> float | NDArray[np.float64]:
    """Air temperature T_air(t) = mean + amplitude cos(2 pi (t + 8 - 15) / 24) [degC].

    Parameters
    ----------
    t_h : float or numpy.ndarray
        Time since placement (08:00) [h].
    mean_c : float, optional
        Daily mean air temperature [degC].
    amplitude_c : float, optional
        Half the daily range [K].

    Returns
    -------
    float or numpy.ndarray
        Air temperature [degC].
    """
    phase = 2.0 * np.pi * (t_h + PLACEMENT_CLOCK_H - WARMEST_CLOCK_H) / 24.0
    return mean_c + amplitude_c * np.cos(phase)


def film_coefficient_w_m2k(air_c: float | NDArray[np.float64]) -> float | NDArray[np.float64]:
    """Film coefficient h = h_c + 4 eps sigma (T_air + 273.15)^3 [W/(m2 K)].

    Parameters
    ----------
    air_c : float or numpy.ndarray
        Air temperature [degC].

    Returns
    -------
    float or numpy.ndarray
        Convective plus linearised radiative film coefficient [W/(m2 K)].
    """
    return CONVECTION_W_M2K + 4.0 * EMISSIVITY * STEFAN_BOLTZMANN_W_M2K4 * (air_c + _KELVIN) ** 3


def _cells_along(length_m: float, cell_m: float) -> int:
    """Number of cells of side ``cell_m`` [m] in ``length_m`` [m]; ValueError if not exact."""
    n = int(round(length_m / cell_m))
    if n < 1 or abs(n * cell_m - length_m) > 1e-9 * length_m:
        raise ValueError(f"cell_m={cell_m!r} must divide {length_m} m exactly")
    return n


@dataclass(frozen=True)
class _Grid:
    """Uniform cell-centred grid of the L-shaped solid (concrete cells numbered first).

    The bounding box has nx_g columns (x from 0 to 5 m) and nz_g + nz_c rows (z from -3 to
    3 m). Concrete cell (row j, column i) of the concrete block (j = 0 at z = 0) has unknown
    index j * nx_c + i; ground cell (row j, column i) (j = 0 at z = -3) has index
    n_concrete + j * nx_g + i.
    """

    cell_m: float
    nx_c: int
    nz_c: int
    nx_g: int
    nz_g: int

    @property
    def n_concrete(self) -> int:
        return self.nx_c * self.nz_c

    @property
    def n_ground(self) -> int:
        return self.nx_g * self.nz_g

    @property
    def n_solid(self) -> int:
        return self.n_concrete + self.n_ground

    def index_map(self) -> NDArray[np.int64]:
        """(n_rows, n_cols) map from bounding-box cell to unknown index; -1 for void."""
        index = np.full((self.nz_g + self.nz_c, self.nx_g), -1, dtype=np.int64)
        index[: self.nz_g, :] = self.n_concrete + np.arange(self.n_ground).reshape(
            self.nz_g, self.nx_g
        )
        index[self.nz_g :, : self.nx_c] = np.arange(self.n_concrete).reshape(self.nz_c, self.nx_c)
        return index


def _conduction_matrix(
    grid: _Grid, conductivity: NDArray[np.float64], index: NDArray[np.int64]
) -> tuple[sparse.csr_matrix, NDArray[np.float64]]:
    """Interior conduction operator plus the fixed-temperature bottom [W/(m K)].

    Returns the (n_solid, n_solid) conductance matrix L with (L T)_p = sum of heat flows into
    cell p per metre of length [W/m] from its solid neighbours and from the bottom boundary
    (diagonal part only), and the per-cell bottom conductance [W/(m K)] so that the bottom
    inflow is g_bottom (T_bottom - T_p).
    """
    d = grid.cell_m
    rows: list[NDArray[np.int64]] = []
    cols: list[NDArray[np.int64]] = []
    vals: list[NDArray[np.float64]] = []
    for a, b in (
        (index[:, :-1], index[:, 1:]),  # horizontal neighbours
        (index[:-1, :], index[1:, :]),  # vertical neighbours
    ):
        mask = (a >= 0) & (b >= 0)
        p, q = a[mask], b[mask]
        g = d / (d / (2.0 * conductivity[p]) + d / (2.0 * conductivity[q]))
        rows += [p, q, p, q]
        cols += [q, p, p, q]
        vals += [g, g, -g, -g]
    bottom_cells = index[0, :]
    g_bottom = np.zeros(grid.n_solid)
    g_bottom[bottom_cells] = d / (d / (2.0 * conductivity[bottom_cells]))
    rows.append(bottom_cells)
    cols.append(bottom_cells)
    vals.append(-g_bottom[bottom_cells])
    lap = sparse.coo_matrix(
        (np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
        shape=(grid.n_solid, grid.n_solid),
    ).tocsr()
    return lap, g_bottom


def _air_faces(
    grid: _Grid, conductivity: NDArray[np.float64], index: NDArray[np.int64]
) -> tuple[NDArray[np.int64], NDArray[np.float64]]:
    """Faces exposed to air: owning cell and fixed resistance d/(2k) + R [m2 K/W]."""
    d = grid.cell_m
    top = index[grid.nz_g + grid.nz_c - 1, : grid.nx_c]
    side = index[grid.nz_g :, grid.nx_c - 1]
    ground = index[grid.nz_g - 1, grid.nx_c :]
    cells = np.concatenate([top, side, ground])
    layer = np.concatenate(
        [
            np.full(top.size, TOP_RESISTANCE_M2K_W),
            np.full(side.size, SIDE_RESISTANCE_M2K_W),
            np.full(ground.size, GROUND_SURFACE_RESISTANCE_M2K_W),
        ]
    )
    return cells, d / (2.0 * conductivity[cells]) + layer


def _axis_weights(coord_m: float, centres_m: NDArray[np.float64]) -> tuple[int, int, float]:
    """Linear interpolation (or extrapolation beyond the last centre) along one axis.

    Returns (i0, i1, w) with value = (1 - w) v[i0] + w v[i1]. A coordinate before the first
    centre takes the first value (used only at the x = 0 symmetry plane, where dT/dx = 0).
    """
    if coord_m <= centres_m[0]:
        return 0, 0, 0.0
    i0 = int(np.clip(np.searchsorted(centres_m, coord_m, side="right") - 1, 0, centres_m.size - 2))
    w = (coord_m - centres_m[i0]) / (centres_m[i0 + 1] - centres_m[i0])
    return i0, i0 + 1, float(w)


def _sensor(field: NDArray[np.float64], grid: _Grid, x_m: float, z_m: float) -> NDArray[np.float64]:
    """Sensor history from concrete cell-centre fields (n_times, nz_c, nx_c) [degC]."""
    d = grid.cell_m
    ix0, ix1, wx = _axis_weights(x_m, (np.arange(grid.nx_c) + 0.5) * d)
    iz0, iz1, wz = _axis_weights(z_m, (np.arange(grid.nz_c) + 0.5) * d)
    lower = (1.0 - wx) * field[:, iz0, ix0] + wx * field[:, iz0, ix1]
    upper = (1.0 - wx) * field[:, iz1, ix0] + wx * field[:, iz1, ix1]
    return (1.0 - wz) * lower + wz * upper


def footing_on_ground(
    cell_m: float,
    rtol: float,
    atol: float = 1e-6,
    duration_h: float = 336.0,
    *,
    hu_j_kg: float = HU_J_KG,
    placement_c: float = PLACEMENT_C,
    ground_initial_c: float = GROUND_INITIAL_C,
    ground_bottom_c: float = GROUND_BOTTOM_C,
    air_mean_c: float = AIR_MEAN_C,
    air_amplitude_c: float = AIR_AMPLITUDE_C,
    points_xz_m: dict[str, tuple[float, float]] | None = None,
) -> dict[str, Any]:
    """Temperature history of the footing section by the method of lines.

    Sources: see the module docstring (Schindler and Folliard 2005 hydration; Freiesleben
    Hansen and Pedersen 1977 / ASTM C1074 equivalent age; Patankar 1980 finite volumes).
    State vector: [T of every solid cell [degC] (concrete cells first), t_e of every concrete
    cell [h]]; independent variable t [h]. Integrated by ``solve_ivp(method="BDF")`` with the
    exact sparse Jacobian (csc) and hourly ``t_eval``.

    Sensors are read from concrete cell centres: along each axis, linear interpolation between
    the two bracketing centres, or linear extrapolation from the last two centres when the
    point lies beyond the outermost centre (e.g. z = 2.95 with cells of 0.125 m or more,
    x = 1.95 with cells of 0.125 m or more). At x = 0 (symmetry plane, dT/dx = 0, before the
    first centre x = d/2) the first column's value is used; its error is O(d^2).

    Peak: ``"peak_c"``/``"peak_time_h"`` are the maximum of the hourly ``"core_c"`` series.
    ``"peak_refined_c"``/``"peak_refined_time_h"`` also look between outputs: a non-terminal
    ``solve_ivp`` event, dT/dt of the currently hottest concrete cell crossing zero from above,
    is tested at every internal step and located on the step's interpolant; the refined peak
    is the maximum over the hourly outputs and those event states.

    Parameters
    ----------
    cell_m : float
        Side of the square cells [m]; must divide 2.0, 3.0 and 5.0 exactly.
    rtol : float
        Relative tolerance of the integrator [-].
    atol : float, optional
        Absolute tolerance of the integrator, applied to T [K] and t_e [h].
    duration_h : float, optional
        End of the integration [h]; outputs every hour from 0.
    hu_j_kg : float, optional
        Total heat of hydration Hu [J/kg] (0 disables the source; for checks).
    placement_c : float, optional
        Initial concrete temperature [degC].
    ground_initial_c : float, optional
        Initial ground temperature [degC].
    ground_bottom_c : float, optional
        Fixed temperature at z = -3 m [degC].
    air_mean_c : float, optional
        Daily mean air temperature [degC].
    air_amplitude_c : float, optional
        Half the daily air temperature range [K].
    points_xz_m : dict, optional
        Further points (x from the symmetry plane, z up from the base of the footing [m]) read
        like the sensors, returned under ``"points_c"``.

    Returns
    -------
    dict
        ``"time_h"`` (n_times,) [h]; ``"core_c"`` hottest concrete cell-centre temperature
        (n_times,) [degC]; ``"top_c"``, ``"side_c"`` sensor temperatures (n_times,) [degC];
        ``"peak_c"`` [degC], ``"peak_time_h"`` [h], ``"peak_x_m"``, ``"peak_z_m"`` centre of the
        hottest cell at the peak [m]; ``"peak_refined_c"`` [degC], ``"peak_refined_time_h"``
        [h]; ``"differential_c"`` core minus side (n_times,) [K], ``"max_differential_c"`` [K],
        ``"max_differential_time_h"`` [h]; ``"cell_m"`` [m]; ``"cells"`` number of solid cells
        (unknown temperatures) [-]; ``"concrete_temperature_c"`` (n_times, nz_c, nx_c) and
        ``"equivalent_age_h"`` (n_times, nz_c, nx_c) [degC, h], row 0 at z = 0, column 0 at
        x = 0; ``"ground_temperature_c"`` (n_times, nz_g, nx_g) [degC], row 0 at z = -3;
        ``"nfev"``, ``"njev"``, ``"nlu"``, ``"steps"`` (accepted internal steps) [-].
    """
    d = float(cell_m)
    if not np.isfinite(d) or d <= 0.0:
        raise ValueError("cell_m must be a positive number")
    if rtol <= 0.0 or atol <= 0.0 or duration_h <= 0.0:
        raise ValueError("rtol, atol and duration_h must be > 0")
    grid = _Grid(
        cell_m=d,
        nx_c=_cells_along(CONCRETE_HALF_WIDTH_M, d),
        nz_c=_cells_along(CONCRETE_HEIGHT_M, d),
        nx_g=_cells_along(GROUND_WIDTH_M, d),
        nz_g=_cells_along(GROUND_DEPTH_M, d),
    )
    nc, ns = grid.n_concrete, grid.n_solid
    index = grid.index_map()
    conductivity = np.full(ns, GROUND_CONDUCTIVITY_W_MK)
    conductivity[:nc] = CONCRETE_CONDUCTIVITY_W_MK
    rho_c = np.full(ns, GROUND_DENSITY_KG_M3 * GROUND_SPECIFIC_HEAT_J_KGK)
    rho_c[:nc] = CONCRETE_DENSITY_KG_M3 * CONCRETE_SPECIFIC_HEAT_J_KGK
    # Heat flow per metre of length [W/m] -> rate of temperature change [K/h].
    to_k_per_h = _SECONDS_PER_HOUR / (rho_c * d * d)

    lap, g_bottom = _conduction_matrix(grid, conductivity, index)
    a_cond = sparse.diags(to_k_per_h) @ lap  # [1/h], constant part of dT/dt
    b_bottom = to_k_per_h * g_bottom * float(ground_bottom_c)  # [K/h]
    face_cells, face_r_fixed = _air_faces(grid, conductivity, index)

    def boundary(t_h: float) -> tuple[float, NDArray[np.float64]]:
        """Air temperature [degC] and per-cell air conductance scaled to [1/h]."""
        air = float(air_temperature_c(t_h, air_mean_c, air_amplitude_c))
        g_face = d / (face_r_fixed + 1.0 / film_coefficient_w_m2k(air))  # [W/(m K)]
        return air, to_k_per_h * np.bincount(face_cells, weights=g_face, minlength=ns)

    # Adiabatic temperature rise coefficient: dT/dt [K/h] = q_coef * d(alpha)/dt [1/h].
    q_coef = float(hu_j_kg) * CEMENTITIOUS_KG_M3 / rho_c[:nc]

    def rhs(t_h: float, y: NDArray[np.float64]) -> NDArray[np.float64]:
        temp, te = y[:ns], y[ns:]
        air, g_air = boundary(t_h)
        age_factor, _ = arrhenius_rate(temp[:nc], ACTIVATION_ENERGY_J_MOL)
        _, rate, _ = hydration_rates(te, TAU_H, BETA, ALPHA_U)
        dtemp = a_cond @ temp + b_bottom + g_air * (air - temp)
        dtemp[:nc] += q_coef * rate * age_factor
        return np.concatenate([dtemp, age_factor])

    def jac(t_h: float, y: NDArray[np.float64]) -> sparse.csc_matrix:
        temp, te = y[:ns], y[ns:]
        _, g_air = boundary(t_h)
        age_factor, d_age = arrhenius_rate(temp[:nc], ACTIVATION_ENERGY_J_MOL)
        _, rate, drate = hydration_rates(te, TAU_H, BETA, ALPHA_U)
        diag_tt = -g_air
        diag_tt[:nc] += q_coef * rate * d_age
        j_tt = a_cond + sparse.diags(diag_tt)
        j_te = sparse.diags(q_coef * drate * age_factor, 0, shape=(ns, nc))
        j_et = sparse.diags(d_age, 0, shape=(nc, ns))
        return sparse.bmat([[j_tt, j_te], [j_et, None]], format="csc")

    # solve_ivp evaluates the event once at t0 and once per accepted step; its root search
    # (brentq on the step interpolant) starts at the two ends of the latest step and then probes
    # inside it. Returning the stored step-end values there keeps the bracket signs identical
    # to those that flagged the crossing (the hottest-cell rate jumps when the hottest cell
    # changes, and is ~0 at equilibrium). The stored list also counts the accepted steps.
    step_ends: list[tuple[float, float]] = []  # (t [h], event value [K/h])

    def hottest_rate(t_h: float, y: NDArray[np.float64]) -> float:
        """dT/dt of the currently hottest concrete cell [K/h]."""
        for t_end, value in step_ends[-2:]:
            if t_h == t_end:
                return value
        value = float(rhs(t_h, y)[int(np.argmax(y[:nc]))])
        if not step_ends or t_h > step_ends[-1][0]:
            step_ends.append((t_h, value))
        return value

    hottest_rate.direction = -1.0  # type: ignore[attr-defined]

    times = np.arange(0.0, float(duration_h) + 0.5, 1.0)
    times = times[times <= duration_h]
    y0 = np.concatenate(
        [np.full(nc, float(placement_c)), np.full(grid.n_ground, float(ground_initial_c))]
    )
    y0 = np.concatenate([y0, np.zeros(nc)])
    sol = solve_ivp(
        rhs,
        (0.0, float(duration_h)),
        y0,
        method="BDF",
        t_eval=times,
        jac=jac,
        rtol=rtol,
        atol=atol,
        events=hottest_rate,
    )
    if not sol.success:
        raise RuntimeError(f"solve_ivp failed: {sol.message}")

    n_t = times.size
    concrete = sol.y[:nc].T.reshape(n_t, grid.nz_c, grid.nx_c)
    ground = sol.y[nc:ns].T.reshape(n_t, grid.nz_g, grid.nx_g)
    te_out = sol.y[ns:].T.reshape(n_t, grid.nz_c, grid.nx_c)
    core = concrete.reshape(n_t, nc).max(axis=1)
    top = _sensor(concrete, grid, *TOP_SENSOR_XZ_M)
    side = _sensor(concrete, grid, *SIDE_SENSOR_XZ_M)
    differential = core - side
    points = {name: _sensor(concrete, grid, x, z) for name, (x, z) in (points_xz_m or {}).items()}

    i_peak = int(np.argmax(core))
    j_peak = int(np.argmax(concrete[i_peak].reshape(-1)))
    peak_refined, peak_refined_time = float(core[i_peak]), float(times[i_peak])
    if sol.y_events[0].size:
        event_core = sol.y_events[0][:, :nc].max(axis=1)
        k = int(np.argmax(event_core))
        if event_core[k] > peak_refined:
            peak_refined, peak_refined_time = float(event_core[k]), float(sol.t_events[0][k])
    i_diff = int(np.argmax(differential))
    return {
        "time_h": times,
        "core_c": core,
        "top_c": top,
        "side_c": side,
        "points_c": points,
        "differential_c": differential,
        "peak_c": float(core[i_peak]),
        "peak_time_h": float(times[i_peak]),
        "peak_x_m": float((j_peak % grid.nx_c + 0.5) * d),
        "peak_z_m": float((j_peak // grid.nx_c + 0.5) * d),
        "peak_refined_c": peak_refined,
        "peak_refined_time_h": peak_refined_time,
        "max_differential_c": float(differential[i_diff]),
        "max_differential_time_h": float(times[i_diff]),
        "cell_m": d,
        "cells": ns,
        "concrete_temperature_c": concrete,
        "equivalent_age_h": te_out,
        "ground_temperature_c": ground,
        "nfev": int(sol.nfev),
        "njev": int(sol.njev),
        "nlu": int(sol.nlu),
        "steps": len(step_ends) - 1,
    }
