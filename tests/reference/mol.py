"""Independent method-of-lines reference for a hydrating concrete slab.

The slab is discretised with a uniform cell-centred finite-volume grid and the resulting ODE
system is integrated with :func:`scipy.integrate.solve_ivp` (BDF, analytic sparse Jacobian).

Units
-----
The independent variable and the equivalent age are both in **hours**: t [h], t_e [h]. Heat
fluxes are in W/m2 and are converted to K/h with the factor 3600 s/h. Temperatures are in degC.

Model
-----
* Heat equation (constant properties), x measured down from the top face [m]::

      rho c dT/dt = d/dx(k dT/dx) + q,    q = Hu Cc d(alpha)/dt  [W/m3]

* Degree of hydration, three-parameter exponential model (Schindler, A. K. and Folliard, K. J.,
  "Heat of hydration models for cementitious materials", ACI Materials Journal 102(1), 2005,
  pp. 24-33, eq. for alpha(t_e))::

      alpha(t_e) = alpha_u exp(-(tau / t_e)^beta)
      d(alpha)/dt = alpha beta / t_e (tau / t_e)^beta dt_e/dt

* Equivalent age at the reference temperature 21.1 degC (Arrhenius function of Freiesleben
  Hansen, P. and Pedersen, E. J., "Maturity computer for controlled curing and hardening of
  concrete", Nordisk Betong 1, 1977, pp. 19-34; as adopted in ASTM C1074)::

      dt_e/dt = exp(-Ea/R (1/(T + 273.15) - 1/(21.1 + 273.15))),   R = 8.314 J/(mol K)

  With t_e(0) = 0, alpha and its rate are 0 at t_e = 0 and every derivative of alpha vanishes
  there; t_e is floored at ``_TE_FLOOR_H`` before the formulas are evaluated.

* Surfaces: an overall conductance U to air acts in series with the half-cell conduction
  resistance, flux into the first/last cell = (T_air - T_cell) / (1/U + dx/(2k)).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import sparse
from scipy.integrate import solve_ivp

__all__ = [
    "GAS_CONSTANT_J_MOLK",
    "REFERENCE_TEMPERATURE_C",
    "adiabatic_temperature",
    "arrhenius_rate",
    "degree_of_hydration",
    "hydrating_slab",
    "hydration_rates",
    "summary",
    "temperature_at_depth",
]

GAS_CONSTANT_J_MOLK = 8.314
"""Universal gas constant R [J/(mol K)]."""

REFERENCE_TEMPERATURE_C = 21.1
"""Reference temperature of the equivalent age [degC]."""

_KELVIN = 273.15
_SECONDS_PER_HOUR = 3600.0
_TE_FLOOR_H = 1e-12
"""Floor applied to the equivalent age before evaluating the hydration model [h]."""
_LOG_ZERO = -745.0
"""Below this natural log, exp() underflows to zero in double precision [-]."""


def arrhenius_rate(
    temperature_c: NDArray[np.float64], activation_energy_j_mol: float
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Arrhenius age factor and its temperature derivative.

    Source: Freiesleben Hansen and Pedersen (1977); ASTM C1074, equivalent-age function.

    Parameters
    ----------
    temperature_c : numpy.ndarray
        Concrete temperature [degC].
    activation_energy_j_mol : float
        Apparent activation energy Ea [J/mol].

    Returns
    -------
    tuple of numpy.ndarray
        (dt_e/dt [-], d(dt_e/dt)/dT [1/K]).
    """
    tk = temperature_c + _KELVIN
    e_over_r = activation_energy_j_mol / GAS_CONSTANT_J_MOLK
    factor = np.exp(-e_over_r * (1.0 / tk - 1.0 / (REFERENCE_TEMPERATURE_C + _KELVIN)))
    return factor, factor * e_over_r / tk**2


def hydration_rates(
    te_h: NDArray[np.float64], tau_h: float, beta: float, alpha_u: float
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Degree of hydration, d(alpha)/d(t_e) and d2(alpha)/d(t_e)2.

    Source: Schindler and Folliard (2005), ACI Materials Journal 102(1), exponential model
    alpha = alpha_u exp(-(tau/t_e)^beta). Evaluated in logarithmic form so that the flat start
    (t_e -> 0) yields exact zeros rather than 0 * inf.

    Parameters
    ----------
    te_h : numpy.ndarray
        Equivalent age t_e [h]; values below ``_TE_FLOOR_H`` are floored.
    tau_h : float
        Hydration time parameter tau [h].
    beta : float
        Hydration shape parameter beta [-].
    alpha_u : float
        Ultimate degree of hydration alpha_u [-].

    Returns
    -------
    tuple of numpy.ndarray
        (alpha [-], d(alpha)/d(t_e) [1/h], d2(alpha)/d(t_e)2 [1/h2]).
    """
    te = np.maximum(te_h, _TE_FLOOR_H)
    log_z = beta * (np.log(tau_h) - np.log(te))
    z = np.exp(np.minimum(log_z, 700.0))
    log_alpha = np.log(alpha_u) - z
    alpha = np.exp(np.maximum(log_alpha, _LOG_ZERO)) * (log_alpha > _LOG_ZERO)
    log_rate = log_alpha + np.log(beta) - np.log(te) + log_z
    rate = np.exp(np.maximum(log_rate, _LOG_ZERO)) * (log_rate > _LOG_ZERO)
    # d/dte of rate = rate * (beta z - beta - 1) / te
    positive = rate > 0.0
    drate = np.where(positive, rate * (beta * z - beta - 1.0) / np.where(positive, te, 1.0), 0.0)
    return alpha, rate, drate


def degree_of_hydration(
    te_h: ArrayLike, tau_h: float, beta: float, alpha_u: float
) -> NDArray[np.float64]:
    """Degree of hydration as a function of equivalent age.

    Source: Schindler, A. K. and Folliard, K. J. (2005), "Heat of hydration models for
    cementitious materials", ACI Materials Journal 102(1), 24-33:
    alpha(t_e) = alpha_u exp(-(tau / t_e)^beta), with alpha(0) = 0.

    Parameters
    ----------
    te_h : array_like
        Equivalent age at 21.1 degC [h].
    tau_h : float
        Hydration time parameter tau [h].
    beta : float
        Hydration shape parameter beta [-].
    alpha_u : float
        Ultimate degree of hydration alpha_u [-].

    Returns
    -------
    numpy.ndarray
        Degree of hydration alpha [-].
    """
    return hydration_rates(np.asarray(te_h, dtype=float), tau_h, beta, alpha_u)[0]


def _check_output_times(output_times_h: ArrayLike, duration_h: float) -> NDArray[np.float64]:
    times = np.atleast_1d(np.asarray(output_times_h, dtype=float))
    if times.ndim != 1 or times.size == 0:
        raise ValueError("output_times_h must be a non-empty 1-D sequence")
    if np.any(np.diff(times) <= 0.0):
        raise ValueError("output_times_h must be strictly increasing")
    if times[0] < 0.0 or times[-1] > duration_h * (1.0 + 1e-12):
        raise ValueError("output_times_h must lie in [0, duration_h]")
    return times


def _surface_conductance(u_w_m2k: float | None, dx_m: float, k_w_mk: float) -> float:
    """Series conductance of the film U and the half cell dx/(2k) [W/(m2 K)]; 0 if adiabatic."""
    if u_w_m2k is None:
        return 0.0
    u = float(u_w_m2k)
    if np.isnan(u) or u < 0.0:
        raise ValueError(f"surface conductance must be >= 0 or None, got {u_w_m2k!r}")
    if np.isinf(u):
        return 2.0 * k_w_mk / dx_m
    return u / (1.0 + u * dx_m / (2.0 * k_w_mk))


def hydrating_slab(
    thickness_m: float,
    n_cells: int,
    placement_c: float,
    air_c: float,
    top_u_w_m2k: float,
    bottom_u_w_m2k: float | None,
    cementitious_kg_m3: float,
    hu_j_kg: float,
    tau_h: float,
    beta: float,
    alpha_u: float,
    activation_energy_j_mol: float,
    density_kg_m3: float,
    specific_heat_j_kgk: float,
    conductivity_w_mk: float,
    duration_h: float,
    output_times_h: ArrayLike,
    rtol: float = 1e-8,
    atol: float = 1e-8,
) -> dict[str, Any]:
    """Temperature history of a hydrating slab by the method of lines.

    Sources: heat generation q = Hu Cc d(alpha)/dt with the exponential hydration model of
    Schindler and Folliard (2005), ACI Materials Journal 102(1), 24-33; equivalent age by the
    Arrhenius function of Freiesleben Hansen and Pedersen (1977) as in ASTM C1074 (reference
    21.1 degC). Spatial discretisation: cell-centred finite volumes, surface flux through the
    film and half-cell resistances in series. Time integration: BDF (scipy.integrate.solve_ivp)
    with the exact sparse Jacobian.

    State vector: [T_0..T_{N-1} [degC], t_e,0..t_e,N-1 [h]]; independent variable t [h].
    Cell i spans [i dx, (i+1) dx] with centre (i + 0.5) dx, x measured down from the top face.

    Parameters
    ----------
    thickness_m : float
        Slab thickness [m].
    n_cells : int
        Number of cells [-].
    placement_c : float
        Uniform initial (placement) temperature [degC].
    air_c : float
        Constant air temperature on the exposed faces [degC].
    top_u_w_m2k : float
        Overall conductance from the top face to air, >= 0 [W/(m2 K)].
    bottom_u_w_m2k : float or None
        Overall conductance from the bottom face to air [W/(m2 K)]; ``None`` is adiabatic.
    cementitious_kg_m3 : float
        Cementitious content Cc [kg/m3].
    hu_j_kg : float
        Total heat of hydration Hu [J/kg].
    tau_h : float
        Hydration time parameter tau [h].
    beta : float
        Hydration shape parameter beta [-].
    alpha_u : float
        Ultimate degree of hydration alpha_u [-].
    activation_energy_j_mol : float
        Apparent activation energy Ea [J/mol].
    density_kg_m3 : float
        Density rho [kg/m3].
    specific_heat_j_kgk : float
        Specific heat c [J/(kg K)].
    conductivity_w_mk : float
        Thermal conductivity k [W/(m K)].
    duration_h : float
        End of the integration [h].
    output_times_h : array_like
        Strictly increasing output times within [0, duration_h] [h].
    rtol : float, optional
        Relative tolerance of the integrator [-].
    atol : float, optional
        Absolute tolerance of the integrator, applied to T [K] and t_e [h].

    Returns
    -------
    dict
        ``"time_h"`` (n_times,) [h]; ``"x_m"`` cell centres (n_cells,) [m];
        ``"temperature_c"`` (n_times, n_cells) [degC]; ``"alpha"`` (n_times, n_cells) [-];
        ``"equivalent_age_h"`` (n_times, n_cells) [h]; ``"dx_m"`` [m]; ``"thickness_m"`` [m];
        ``"air_c"`` [degC]; ``"top_u_w_m2k"``, ``"bottom_u_w_m2k"`` [W/(m2 K)] (bottom may be
        None); ``"conductivity_w_mk"`` [W/(m K)]; ``"nfev"``, ``"njev"``, ``"nlu"`` solver
        statistics [-].
    """
    n = int(n_cells)
    if n < 1:
        raise ValueError("n_cells must be >= 1")
    length = float(thickness_m)
    k = float(conductivity_w_mk)
    rho_c = float(density_kg_m3) * float(specific_heat_j_kgk)
    if length <= 0.0 or k <= 0.0 or rho_c <= 0.0 or tau_h <= 0.0 or beta <= 0.0:
        raise ValueError("thickness, conductivity, rho*c, tau and beta must be > 0")
    if not 0.0 < alpha_u <= 1.0:
        raise ValueError("alpha_u must lie in (0, 1]")
    times = _check_output_times(output_times_h, float(duration_h))
    dx = length / n

    g_top = _surface_conductance(top_u_w_m2k, dx, k)
    g_bot = _surface_conductance(bottom_u_w_m2k, dx, k)
    # Conduction operator in K/h per K: dT_i/dt = sum_j A_ij T_j + b_i.
    to_k_per_h = _SECONDS_PER_HOUR / (rho_c * dx)
    g_int = k / dx
    main = np.full(n, -2.0 * g_int)
    main[0] = -g_int - g_top
    main[-1] = -g_int - g_bot
    if n == 1:
        main[0] = -g_top - g_bot
    off = np.full(n - 1, g_int)
    a_cond = sparse.diags([off, main, off], [-1, 0, 1], shape=(n, n), format="csr") * to_k_per_h
    b_cond = np.zeros(n)
    b_cond[0] += g_top * air_c * to_k_per_h
    b_cond[-1] += g_bot * air_c * to_k_per_h
    # Adiabatic temperature rise coefficient: dT/dt [K/h] = q_coef * d(alpha)/dt [1/h].
    q_coef = float(hu_j_kg) * float(cementitious_kg_m3) / rho_c
    ea = float(activation_energy_j_mol)

    def rhs(_t: float, y: NDArray[np.float64]) -> NDArray[np.float64]:
        temp, te = y[:n], y[n:]
        age_factor, _ = arrhenius_rate(temp, ea)
        _, rate, _ = hydration_rates(te, tau_h, beta, alpha_u)
        dtemp = a_cond @ temp + b_cond + q_coef * rate * age_factor
        return np.concatenate([dtemp, age_factor])

    def jac(_t: float, y: NDArray[np.float64]) -> sparse.csc_matrix:
        temp, te = y[:n], y[n:]
        age_factor, d_age = arrhenius_rate(temp, ea)
        _, rate, drate = hydration_rates(te, tau_h, beta, alpha_u)
        j_tt = a_cond + sparse.diags(q_coef * rate * d_age)
        j_te = sparse.diags(q_coef * drate * age_factor)
        j_et = sparse.diags(d_age)
        return sparse.bmat([[j_tt, j_te], [j_et, None]], format="csc")

    y0 = np.concatenate([np.full(n, float(placement_c)), np.zeros(n)])
    sol = solve_ivp(
        rhs,
        (0.0, float(duration_h)),
        y0,
        method="BDF",
        t_eval=times,
        jac=jac,
        rtol=rtol,
        atol=atol,
    )
    if not sol.success:
        raise RuntimeError(f"solve_ivp failed: {sol.message}")
    temperature = sol.y[:n].T.copy()
    te_out = sol.y[n:].T.copy()
    alpha = hydration_rates(te_out, tau_h, beta, alpha_u)[0]
    return {
        "time_h": times,
        "x_m": (np.arange(n) + 0.5) * dx,
        "temperature_c": temperature,
        "alpha": alpha,
        "equivalent_age_h": te_out,
        "dx_m": dx,
        "thickness_m": length,
        "air_c": float(air_c),
        "top_u_w_m2k": float(top_u_w_m2k),
        "bottom_u_w_m2k": None if bottom_u_w_m2k is None else float(bottom_u_w_m2k),
        "conductivity_w_mk": k,
        "nfev": int(sol.nfev),
        "njev": int(sol.njev),
        "nlu": int(sol.nlu),
    }


def _face_temperature(
    cell_c: NDArray[np.float64], u_w_m2k: float | None, air_c: float, dx: float, k: float
) -> NDArray[np.float64]:
    """Face temperature from the film / half-cell resistance split (adiabatic: cell value)."""
    if u_w_m2k is None or u_w_m2k == 0.0:
        return cell_c.copy()
    if np.isinf(u_w_m2k):
        return np.full_like(cell_c, air_c)
    g = _surface_conductance(u_w_m2k, dx, k)
    flux = g * (air_c - cell_c)  # into the body [W/m2]
    return air_c - flux / u_w_m2k


def temperature_at_depth(result: dict[str, Any], depth_m: ArrayLike) -> NDArray[np.float64]:
    """Temperature at given depths below the top face, by linear interpolation.

    Between cell centres the profile is interpolated linearly. Within half a cell of a face the
    interpolation is between that face's temperature and the nearest centre, the face
    temperature following from the series resistances 1/U (film) and dx/(2k) (half cell):
    T_face = T_air - q/U with q = (T_air - T_cell) / (1/U + dx/(2k)); an adiabatic face takes
    the adjacent cell temperature. Source: finite-volume boundary treatment with resistances in
    series, Patankar, S. V., *Numerical Heat Transfer and Fluid Flow*, Hemisphere, 1980,
    chapter 4 (one-dimensional steady conduction: interface conductivity and boundary
    conditions).

    Parameters
    ----------
    result : dict
        Output of :func:`hydrating_slab`.
    depth_m : array_like
        Depth(s) below the top face, 0 <= depth <= thickness [m].

    Returns
    -------
    numpy.ndarray
        Shape (n_times,) for a scalar depth, else (n_times, n_depths) [degC].
    """
    depth = np.asarray(depth_m, dtype=float)
    length = float(result["thickness_m"])
    if np.any(depth < 0.0) or np.any(depth > length * (1.0 + 1e-12)):
        raise ValueError("depth_m must lie in [0, thickness_m]")
    temp = np.asarray(result["temperature_c"], dtype=float)
    dx = float(result["dx_m"])
    k = float(result["conductivity_w_mk"])
    air = float(result["air_c"])
    top = _face_temperature(temp[:, 0], result["top_u_w_m2k"], air, dx, k)
    bottom = _face_temperature(temp[:, -1], result["bottom_u_w_m2k"], air, dx, k)
    nodes = np.concatenate([[0.0], np.asarray(result["x_m"], dtype=float), [length]])
    values = np.column_stack([top, temp, bottom])
    flat = np.atleast_1d(depth).reshape(-1)
    out = np.empty((values.shape[0], flat.size))
    for j, d in enumerate(flat):
        i = int(np.clip(np.searchsorted(nodes, d, side="right") - 1, 0, nodes.size - 2))
        w = (d - nodes[i]) / (nodes[i + 1] - nodes[i])
        out[:, j] = (1.0 - w) * values[:, i] + w * values[:, i + 1]
    return out[:, 0] if depth.ndim == 0 else out


def summary(
    result: dict[str, Any],
    near_surface_depth_m: float = 0.05,
    *,
    bottom_exposed: bool | None = None,
) -> dict[str, float]:
    """Peak temperature and maximum core-to-surface differential of a slab result.

    The peak is the maximum of T over all cells and output times. The differential at each
    output time is max_i T_i minus the near-surface temperature, which is the value interpolated
    (:func:`temperature_at_depth`) at ``near_surface_depth_m`` below the top face and, when the
    bottom is exposed, the minimum of that and the value at ``near_surface_depth_m`` above the
    bottom face. This is the core-to-surface temperature difference limited for mass concrete
    by ACI 301 (Specifications for Concrete Construction, section 8, mass concrete) and
    discussed in ACI 207.1R; the 0.05 m near-surface depth is this project's convention. Time
    resolution is that of ``result["time_h"]``.

    Parameters
    ----------
    result : dict
        Output of :func:`hydrating_slab`.
    near_surface_depth_m : float, optional
        Distance of the near-surface point from the exposed face [m].
    bottom_exposed : bool or None, optional
        Whether the bottom face counts as exposed; ``None`` infers it from the result
        (exposed when ``bottom_u_w_m2k`` is not None).

    Returns
    -------
    dict
        ``"peak_c"`` [degC], ``"peak_time_h"`` [h], ``"peak_depth_m"`` [m],
        ``"max_differential_c"`` [K], ``"max_differential_time_h"`` [h].
    """
    if bottom_exposed is None:
        bottom_exposed = result["bottom_u_w_m2k"] is not None
    temp = np.asarray(result["temperature_c"], dtype=float)
    times = np.asarray(result["time_h"], dtype=float)
    i_t, i_x = np.unravel_index(int(np.argmax(temp)), temp.shape)
    near = temperature_at_depth(result, float(near_surface_depth_m))
    if bottom_exposed:
        depth_bottom = float(result["thickness_m"]) - float(near_surface_depth_m)
        near = np.minimum(near, temperature_at_depth(result, depth_bottom))
    differential = temp.max(axis=1) - near
    i_d = int(np.argmax(differential))
    return {
        "peak_c": float(temp[i_t, i_x]),
        "peak_time_h": float(times[i_t]),
        "peak_depth_m": float(np.asarray(result["x_m"])[i_x]),
        "max_differential_c": float(differential[i_d]),
        "max_differential_time_h": float(times[i_d]),
    }


def adiabatic_temperature(
    placement_c: float,
    cementitious_kg_m3: float,
    hu_j_kg: float,
    tau_h: float,
    beta: float,
    alpha_u: float,
    activation_energy_j_mol: float,
    density_kg_m3: float,
    specific_heat_j_kgk: float,
    output_times_h: ArrayLike,
    rtol: float = 1e-10,
    atol: float = 1e-10,
) -> NDArray[np.float64]:
    """Adiabatic temperature history of hydrating concrete.

    Solves dT/dt = Hu Cc / (rho c) d(alpha)/dt together with dt_e/dt (Arrhenius, Freiesleben
    Hansen and Pedersen 1977 / ASTM C1074) and the exponential hydration model of Schindler and
    Folliard (2005), ACI Materials Journal 102(1), with solve_ivp (Radau, analytic Jacobian).
    The time variable and the equivalent age are in hours.

    Parameters
    ----------
    placement_c : float
        Initial temperature [degC].
    cementitious_kg_m3 : float
        Cementitious content Cc [kg/m3].
    hu_j_kg : float
        Total heat of hydration Hu [J/kg].
    tau_h : float
        Hydration time parameter tau [h].
    beta : float
        Hydration shape parameter beta [-].
    alpha_u : float
        Ultimate degree of hydration alpha_u [-].
    activation_energy_j_mol : float
        Apparent activation energy Ea [J/mol].
    density_kg_m3 : float
        Density rho [kg/m3].
    specific_heat_j_kgk : float
        Specific heat c [J/(kg K)].
    output_times_h : array_like
        Strictly increasing output times >= 0 [h].
    rtol : float, optional
        Relative tolerance [-].
    atol : float, optional
        Absolute tolerance on T [K] and t_e [h].

    Returns
    -------
    numpy.ndarray
        Temperature at ``output_times_h`` [degC].
    """
    times = np.atleast_1d(np.asarray(output_times_h, dtype=float))
    if times.ndim != 1 or times.size == 0 or np.any(np.diff(times) <= 0.0) or times[0] < 0.0:
        raise ValueError("output_times_h must be a non-empty increasing sequence >= 0")
    q_coef = float(hu_j_kg) * float(cementitious_kg_m3) / (density_kg_m3 * specific_heat_j_kgk)
    ea = float(activation_energy_j_mol)

    def rhs(_t: float, y: NDArray[np.float64]) -> NDArray[np.float64]:
        age_factor, _ = arrhenius_rate(y[:1], ea)
        _, rate, _ = hydration_rates(y[1:], tau_h, beta, alpha_u)
        return np.array([q_coef * rate[0] * age_factor[0], age_factor[0]])

    def jac(_t: float, y: NDArray[np.float64]) -> NDArray[np.float64]:
        age_factor, d_age = arrhenius_rate(y[:1], ea)
        _, rate, drate = hydration_rates(y[1:], tau_h, beta, alpha_u)
        return np.array(
            [
                [q_coef * rate[0] * d_age[0], q_coef * drate[0] * age_factor[0]],
                [d_age[0], 0.0],
            ]
        )

    t_end = float(times[-1])
    if t_end == 0.0:
        return np.full(times.shape, float(placement_c))
    sol = solve_ivp(
        rhs,
        (0.0, t_end),
        np.array([float(placement_c), 0.0]),
        method="Radau",
        t_eval=times,
        jac=jac,
        rtol=rtol,
        atol=atol,
    )
    if not sol.success:
        raise RuntimeError(f"solve_ivp failed: {sol.message}")
    return sol.y[0].copy()
