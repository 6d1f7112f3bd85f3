"""Independent method-of-lines reference for a hydrating concrete block (3D, corners and edges).

A block ``2 a`` wide (x), ``2 b`` long (y) and ``c`` tall (z) with an insulated top, formed
sides and an adiabatic bottom, in still air of constant temperature and wind. By symmetry only
the quarter ``0 <= x <= a``, ``0 <= y <= b``, ``0 <= z <= c`` is meshed (x = 0 and y = 0 are
symmetry planes). The grid is a tensor product of cell-centred finite volumes whose widths grow
geometrically from the exposed face inward (ratio ``ratio`` per cell; halving the spacing means
twice the cells and the square root of the ratio). The ODE system is integrated with
:func:`scipy.integrate.solve_ivp` (BDF, analytic sparse Jacobian). Nothing from the project's
``model`` or ``service`` packages is used: numpy, scipy and the hydration and Arrhenius
functions of the 1D reference, tests/reference/mol.py.

Units: t [h], equivalent age t_e [h], temperatures degC, lengths m, heat flows W.

Model (as in tests/reference/mol_section.py)
-------------------------------------------
* ``rho c dT/dt = div(k grad T) + Hu Cc d(alpha)/dt`` with constant properties;
  ``alpha = alpha_u exp(-(tau/t_e)^beta)`` (Schindler and Folliard, ACI Materials Journal
  102(1), 2005); ``dt_e/dt = exp(-Ea/R (1/(T + 273.15) - 1/(21.1 + 273.15)))`` (Freiesleben
  Hansen and Pedersen 1977, ASTM C1074).
* Film coefficient ``h = 2.8 + 3.0 v + 4 eps sigma (T_air + 273.15)^3`` (convection plus
  radiation linearised at the air temperature), a face with a layer of resistance R has
  ``U = 1 / (R + 1/h)``.
* Finite volumes (Patankar, *Numerical Heat Transfer and Fluid Flow*, 1980, chapter 4): between
  neighbours ``k A / (w_1/2 + w_2/2)``; from a boundary cell ``A / (w/(2k) + 1/U)``.
* Point values by trilinear interpolation between cell centres (linear extrapolation from the
  last two centres beyond the outermost one).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import NDArray
from scipy import sparse
from scipy.integrate import solve_ivp

from tests.reference.mol import arrhenius_rate, hydration_rates

STEFAN_BOLTZMANN_W_M2K4 = 5.670374419e-8
_KELVIN = 273.15
_SECONDS_PER_HOUR = 3600.0

CONDUCTIVITY_W_MK = 2.5
DENSITY_KG_M3 = 2400.0
SPECIFIC_HEAT_J_KGK = 1000.0
CEMENTITIOUS_KG_M3 = 380.0
HU_J_KG = 460000.0
TAU_H = 13.0
BETA = 0.9
ALPHA_U = 0.75
ACTIVATION_ENERGY_J_MOL = 41000.0
EMISSIVITY = 0.9


def face_widths_m(length_m: float, cells: int, ratio: float) -> NDArray[np.float64]:
    """Widths of ``cells`` cells from the symmetry plane (index 0) to the exposed face, shrinking
    by ``ratio`` per cell toward the face and summing to ``length_m`` [m]."""
    k = np.arange(cells)[::-1]  # 0 at the face
    widths = ratio**k
    return length_m * widths / widths.sum()


def block(
    half_width_m: float,
    half_length_m: float,
    height_m: float,
    cells: tuple[int, int, int],
    ratio: float,
    points_m: dict[str, tuple[float, float, float]],
    *,
    placement_c: float,
    air_c: float,
    wind_m_s: float,
    top_r_m2k_w: float,
    side_r_m2k_w: float,
    duration_h: float,
    rtol: float = 1e-7,
    atol: float = 1e-7,
) -> dict[str, Any]:
    """Hourly temperatures at ``points_m`` (x, y from the block's centre, z up from its
    bottom [m]) of the quarter block by the method of lines.

    Returns ``"time_h"`` (n,) [h], ``"points_c"`` {name: (n,) [degC]}, ``"cells"`` [-].
    """
    nx, ny, nz = cells
    wx = face_widths_m(half_width_m, nx, ratio)
    wy = face_widths_m(half_length_m, ny, ratio)
    wz = face_widths_m(height_m, nz, ratio)  # bottom adiabatic like a symmetry plane
    n = nx * ny * nz
    index = np.arange(n).reshape(nx, ny, nz)
    k = CONDUCTIVITY_W_MK
    volume = (wx[:, None, None] * wy[None, :, None] * wz[None, None, :]).ravel()
    capacity = DENSITY_KG_M3 * SPECIFIC_HEAT_J_KGK * volume  # [J/K]
    to_k_per_h = _SECONDS_PER_HOUR / capacity

    rows, cols, vals = [], [], []
    widths = (wx, wy, wz)
    for axis in range(3):
        w = widths[axis]
        area = np.ones((nx, ny, nz))
        for other in range(3):
            if other != axis:
                shape = [1, 1, 1]
                shape[other] = -1
                area = area * widths[other].reshape(shape)
        lo = [slice(None)] * 3
        hi = [slice(None)] * 3
        lo[axis], hi[axis] = slice(None, -1), slice(1, None)
        p, q = index[tuple(lo)].ravel(), index[tuple(hi)].ravel()
        shape = [1, 1, 1]
        shape[axis] = -1
        dist = (0.5 * (w[:-1] + w[1:])).reshape(shape)
        g = (k * area[tuple(lo)] / dist).ravel()
        rows += [p, q, p, q]
        cols += [q, p, p, q]
        vals += [g, g, -g, -g]
    lap = sparse.coo_matrix(
        (np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(n, n)
    ).tocsr()

    h = 2.8 + 3.0 * wind_m_s + 4.0 * EMISSIVITY * STEFAN_BOLTZMANN_W_M2K4 * (air_c + _KELVIN) ** 3
    g_air = np.zeros(n)
    for cells_f, area, w_cell, r in (
        (index[-1, :, :], np.outer(wy, wz), wx[-1], side_r_m2k_w),
        (index[:, -1, :], np.outer(wx, wz), wy[-1], side_r_m2k_w),
        (index[:, :, -1], np.outer(wx, wy), wz[-1], top_r_m2k_w),
    ):
        np.add.at(g_air, cells_f.ravel(), area.ravel() / (w_cell / (2.0 * k) + r + 1.0 / h))
    a_cond = sparse.diags(to_k_per_h) @ (lap - sparse.diags(g_air))
    b_air = to_k_per_h * g_air * air_c
    q_coef = HU_J_KG * CEMENTITIOUS_KG_M3 / (DENSITY_KG_M3 * SPECIFIC_HEAT_J_KGK)

    def rhs(t_h: float, y: NDArray[np.float64]) -> NDArray[np.float64]:
        temp, te = y[:n], y[n:]
        age_factor, _ = arrhenius_rate(temp, ACTIVATION_ENERGY_J_MOL)
        _, rate, _ = hydration_rates(te, TAU_H, BETA, ALPHA_U)
        return np.concatenate([a_cond @ temp + b_air + q_coef * rate * age_factor, age_factor])

    def jac(t_h: float, y: NDArray[np.float64]) -> sparse.csc_matrix:
        temp, te = y[:n], y[n:]
        age_factor, d_age = arrhenius_rate(temp, ACTIVATION_ENERGY_J_MOL)
        _, rate, drate = hydration_rates(te, TAU_H, BETA, ALPHA_U)
        j_tt = a_cond + sparse.diags(q_coef * rate * d_age)
        j_te = sparse.diags(q_coef * drate * age_factor)
        return sparse.bmat([[j_tt, j_te], [sparse.diags(d_age), None]], format="csc")

    times = np.arange(0.0, duration_h + 0.5, 1.0)
    times = times[times <= duration_h]
    y0 = np.concatenate([np.full(n, placement_c), np.zeros(n)])
    sol = solve_ivp(
        rhs, (0.0, duration_h), y0, method="BDF", t_eval=times, jac=jac, rtol=rtol, atol=atol
    )
    if not sol.success:
        raise RuntimeError(f"solve_ivp failed: {sol.message}")
    field = sol.y[:n].T.reshape(times.size, nx, ny, nz)
    centres = [np.cumsum(w) - 0.5 * w for w in widths]
    out = {}
    for name, (x, y, z) in points_m.items():
        per_axis = [
            _weights(abs(x), centres[0]),
            _weights(abs(y), centres[1]),
            _weights(z, centres[2]),
        ]
        value = np.zeros(times.size)
        for i, a in per_axis[0]:
            for j, b in per_axis[1]:
                for m, c in per_axis[2]:
                    value += a * b * c * field[:, i, j, m]
        out[name] = value
    return {"time_h": times, "points_c": out, "cells": n}


def _weights(coord_m: float, centres_m: NDArray[np.float64]) -> list[tuple[int, float]]:
    """Linear interpolation between centres; before the first centre (a symmetry plane or the
    adiabatic bottom, zero gradient) the first value; beyond the last, linear extrapolation."""
    if coord_m <= centres_m[0]:
        return [(0, 1.0)]
    i = int(np.clip(np.searchsorted(centres_m, coord_m) - 1, 0, centres_m.size - 2))
    w = (coord_m - centres_m[i]) / (centres_m[i + 1] - centres_m[i])
    return [(i, 1.0 - w), (i + 1, w)]
