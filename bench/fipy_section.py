"""Benchmark-only reference: the 2D footing section solved with FiPy on the project's own grid.

FiPy is a general-purpose finite-volume PDE library (Guyer, J. E., Wheeler, D. and Warren,
J. A. (2009), "FiPy: Partial Differential Equations with Python", Computing in Science &
Engineering 11(3), 6-15). It is used here only by the benchmarks, as an independent second
solver of the footing case of ``bench.__main__.footing_2d`` (the physics is written out again
below, not taken from ``model``), on the same graded rectilinear grid and the same step times.

Physics (SI units, temperatures in C, time in s inside FiPy and in h outside):
``rho c dT/dt = div(k grad T) + q`` on the L-shaped solid (concrete block on a ground layer),
with the Schindler & Folliard (2005) hydration heat ``q = Hu Cc d(alpha)/dt`` in the concrete.

Discretisation:

- FiPy ``Grid2D`` with the given non-uniform widths; the model's x is FiPy's x and the model's z
  is FiPy's y, with the mesh origin at the lowest edges (here (0, -3) m).
- Conduction: ``DiffusionTerm`` with a face conductivity that is the distance-weighted harmonic
  mean of the two neighbouring cells, so a face between cells 1 and 2 conducts
  ``A / (d1/(2 k1) + d2/(2 k2))``; it is zero on every face touching a void cell (void
  conductivity 0), and exterior faces without constraints are FiPy's default no-flux (the
  symmetry plane x = 0 and the far side of the ground).
- Void cells: capacity only, no conduction and no source, so each backward-Euler step returns
  their old value: they stay at their initial value and are decoupled from the solid.
- Every heat-exchanging face (concrete top, formed concrete side, bare ground surface, fixed
  deep-ground temperature at the bottom) is a cell source ``-(G/V) (T - T_env)`` in the solid
  cell behind it, implicit in T (``ImplicitSourceTerm``) plus the explicit ``(G/V) T_env``,
  with ``G = A / (d/(2k) + 1/U)`` [W/K] (``1/U = 0`` at the fixed-temperature bottom) and
  ``U = 1 / (R + 1/h)``, h from the air temperature at the end of the step.
- Time: backward Euler (``TransientTerm``) between consecutive given step times; the hydration
  heat of a step, ``Hu Cc (alpha_{n+1} - alpha_n) / dt``, is lagged and iterated to a fixed point
  (Picard sweeps), with the equivalent age advanced by backward Euler,
  ``te_{n+1} = te_n + dt f(T_{n+1})``.

Schindler, A. K. and Folliard, K. J. (2005), "Heat of Hydration Models for Cementitious
Materials", ACI Materials Journal 102(1), 24-33.
"""

import math
import time
from typing import Any

import fipy
import numpy as np
from numpy.typing import ArrayLike, NDArray

VOID, CONCRETE, GROUND = 0, 1, 2
"""Cell material codes of the ``material`` array (as in ``model.grid``)."""

# Concrete
CONCRETE_CONDUCTIVITY_W_MK = 2.5
CONCRETE_DENSITY_KG_M3 = 2400.0
CONCRETE_SPECIFIC_HEAT_J_KGK = 1000.0
PLACEMENT_C = 18.0
# Hydration (Schindler & Folliard 2005)
CEMENTITIOUS_KG_M3 = 380.0
TOTAL_HEAT_J_KG = 460000.0
TAU_H = 13.0
BETA = 0.9
ALPHA_U = 0.75
ACTIVATION_ENERGY_J_MOL = 41000.0
GAS_CONSTANT_J_MOLK = 8.314
REFERENCE_C = 21.1
KELVIN_OFFSET = 273.15
# Ground
GROUND_CONDUCTIVITY_W_MK = 1.5
GROUND_DENSITY_KG_M3 = 1900.0
GROUND_SPECIFIC_HEAT_J_KGK = 900.0
GROUND_INITIAL_C = 12.0
DEEP_C = 12.0
# Faces and weather
TOP_R_M2K_W = 0.5
SIDE_R_M2K_W = 0.15
GROUND_SURFACE_R_M2K_W = 0.0
AIR_MEAN_C, AIR_AMPLITUDE_C = 15.0, 7.0
PLACEMENT_CLOCK_H, WARMEST_CLOCK_H = 8.0, 15.0
CONVECTION_W_M2K = 2.8 + 3.0 * 3.0
"""Wind-driven film coefficient at 3 m/s [W/(m2 K)]."""
EMISSIVITY = 0.9
STEFAN_BOLTZMANN_W_M2K4 = 5.670374419e-8
# Sensors (x, z) [m]
TOP_SENSOR_M = (0.0, 2.95)
SIDE_SENSOR_M = (1.95, 1.5)

LINEAR_TOLERANCE = 1e-12
"""Residual of each linear solve relative to the norm of its right-hand side [-]."""

_SECONDS_PER_HOUR = 3600.0
_TE_FLOOR_H = 1e-12


def air_temperature_c(time_h: ArrayLike) -> NDArray[np.float64]:
    """Daily air cycle [C]: min 8 C, max 22 C at 15:00, placement at 08:00; time in [h]."""
    t = np.asarray(time_h, dtype=float)
    phase = 2.0 * np.pi * (t + PLACEMENT_CLOCK_H - WARMEST_CLOCK_H) / 24.0
    return AIR_MEAN_C + AIR_AMPLITUDE_C * np.cos(phase)


def film_coefficient_w_m2k(air_c: float) -> float:
    """Convection plus radiation linearised at the air temperature [W/(m2 K)]."""
    return (
        CONVECTION_W_M2K + 4.0 * EMISSIVITY * STEFAN_BOLTZMANN_W_M2K4 * (air_c + KELVIN_OFFSET) ** 3
    )


def arrhenius_factor(temperature_c: NDArray[np.float64]) -> NDArray[np.float64]:
    """Rate of equivalent age per unit time at 21.1 C [h/h]."""
    inverse = 1.0 / (temperature_c + KELVIN_OFFSET) - 1.0 / (REFERENCE_C + KELVIN_OFFSET)
    return np.exp(-ACTIVATION_ENERGY_J_MOL / GAS_CONSTANT_J_MOLK * inverse)


def degree_of_hydration(equivalent_age_h: NDArray[np.float64]) -> NDArray[np.float64]:
    """``alpha_u exp(-(tau/te)^beta)`` [-], zero at te = 0; equivalent age in [h]."""
    te = np.maximum(equivalent_age_h, _TE_FLOOR_H)
    return ALPHA_U * np.exp(-((TAU_H / te) ** BETA))


def _exposed_faces(
    edges_x_m: NDArray[np.float64], edges_z_m: NDArray[np.float64], material: NDArray[np.int8]
) -> tuple[dict[str, NDArray[Any]], dict[str, NDArray[Any]]]:
    """Faces exchanging heat with the air and faces at the fixed deep temperature.

    Returns two dicts of equal-length arrays, ``cell`` (flat FiPy cell index), ``area_m2``,
    ``half_resistance_m2k_w`` (``d/(2k)`` of the cell behind the face) and, for the air faces,
    ``cover_r_m2k_w`` (insulation or formwork resistance).
    """
    nx, nz = material.shape
    wx, wz = np.diff(edges_x_m), np.diff(edges_z_m)
    solid = material != VOID
    k = np.select(
        [material == CONCRETE, material == GROUND],
        [CONCRETE_CONDUCTIVITY_W_MK, GROUND_CONDUCTIVITY_W_MK],
        0.0,
    )
    # Neighbour is void, or beyond the mesh at the top (the top row of the mesh is exposed).
    void_above = np.ones_like(solid)
    void_above[:, :-1] = ~solid[:, 1:]
    void_right = np.zeros_like(solid)
    void_right[:-1, :] = ~solid[1:, :]
    void_left = np.zeros_like(solid)
    void_left[1:, :] = ~solid[:-1, :]
    void_below = np.zeros_like(solid)
    void_below[:, 1:] = ~solid[:, :-1]
    if np.any(solid & void_below) or np.any(
        solid & (void_left | void_right) & (material == GROUND)
    ):
        raise ValueError("material layout is not a footing on a ground layer")

    air: dict[str, list[NDArray[Any]]] = {
        "cell": [],
        "area_m2": [],
        "half_resistance_m2k_w": [],
        "cover_r_m2k_w": [],
    }
    ix, iz = np.meshgrid(np.arange(nx), np.arange(nz), indexing="ij")
    flat = ix + nx * iz  # FiPy numbers cells x first
    for mask, area, half, cover in (
        (solid & void_above & (material == CONCRETE), wx[ix], wz[iz] / 2, TOP_R_M2K_W),
        (solid & void_above & (material == GROUND), wx[ix], wz[iz] / 2, GROUND_SURFACE_R_M2K_W),
        (solid & void_right, wz[iz], wx[ix] / 2, SIDE_R_M2K_W),
        (solid & void_left, wz[iz], wx[ix] / 2, SIDE_R_M2K_W),
    ):
        air["cell"].append(flat[mask])
        air["area_m2"].append(area[mask])
        air["half_resistance_m2k_w"].append(half[mask] / k[mask])
        air["cover_r_m2k_w"].append(np.full(int(mask.sum()), cover))
    bottom = np.zeros_like(solid)
    bottom[:, 0] = solid[:, 0]
    deep = {
        "cell": flat[bottom],
        "area_m2": wx[ix][bottom],
        "half_resistance_m2k_w": (wz[iz] / 2)[bottom] / k[bottom],
    }
    return {name: np.concatenate(parts) for name, parts in air.items()}, deep


def _linear_weights(coordinate_m: float, centres_m: NDArray[np.float64]) -> list[tuple[int, float]]:
    """(index, weight) of linear interpolation between centres, clamped to the end centres."""
    if coordinate_m <= centres_m[0]:
        return [(0, 1.0)]
    if coordinate_m >= centres_m[-1]:
        return [(centres_m.size - 1, 1.0)]
    i = int(np.searchsorted(centres_m, coordinate_m)) - 1
    w = (coordinate_m - centres_m[i]) / (centres_m[i + 1] - centres_m[i])
    return [(i, 1.0 - w), (i + 1, w)]


def _sensor_weights(
    point_m: tuple[float, float],
    edges_x_m: NDArray[np.float64],
    edges_z_m: NDArray[np.float64],
    material: NDArray[np.int8],
) -> tuple[NDArray[np.int64], NDArray[np.float64]]:
    """Flat FiPy cell indices and weights of a bilinear interpolation between concrete centres.

    A point outside the band of concrete centres along an axis takes the nearest centre's value
    along that axis (the "top" sensor on the symmetry plane x = 0 thus takes the first column's
    values, interpolated in z).
    """
    nx = material.shape[0]
    columns = np.flatnonzero((material == CONCRETE).any(axis=1))
    rows = np.flatnonzero((material == CONCRETE).any(axis=0))
    xc = 0.5 * (edges_x_m[1:] + edges_x_m[:-1])[columns]
    zc = 0.5 * (edges_z_m[1:] + edges_z_m[:-1])[rows]
    cells, weights = [], []
    for i, wi in _linear_weights(point_m[0], xc):
        for j, wj in _linear_weights(point_m[1], zc):
            if material[columns[i], rows[j]] != CONCRETE:
                raise ValueError(f"sensor at {point_m} is not surrounded by concrete centres")
            cells.append(columns[i] + nx * rows[j])
            weights.append(wi * wj)
    return np.array(cells), np.array(weights)


def solve_footing(
    edges_x_m: ArrayLike,
    edges_z_m: ArrayLike,
    material: ArrayLike,
    step_times_h: ArrayLike,
    sweeps_tolerance_c: float = 1e-4,
    max_sweeps: int = 10,
) -> dict[str, Any]:
    """March the footing section with FiPy through the given step times.

    Parameters
    ----------
    edges_x_m : cell edges across the section, from the symmetry plane x = 0 [m]
    edges_z_m : cell edges upward, from the bottom of the ground layer [m]
    material : (nx, nz) cell materials, VOID / CONCRETE / GROUND
    step_times_h : increasing times from placement (the first is 0) at which steps end [h]
    sweeps_tolerance_c : a step's Picard sweeps stop when no cell's temperature changes by more
        than this between sweeps [C]
    max_sweeps : most sweeps per step

    Returns
    -------
    dict with ``time_h`` (the step times [h]), ``core_c`` (hottest concrete cell centre),
    ``top_c`` and ``side_c`` (sensors at (0, 2.95) and (1.95, 1.5) m, bilinear between concrete
    centres; "top" takes the first column's values, interpolated in z, as x = 0 lies before the
    first centre), ``peak_c`` (max core), ``max_differential_c`` (max of core - side), all in
    [C]; ``cells`` (FiPy cells, void included), ``sweeps`` (linear solves over the run) and
    ``seconds`` (wall time of the time loop [s]).
    """
    ex = np.asarray(edges_x_m, dtype=float)
    ez = np.asarray(edges_z_m, dtype=float)
    mat = np.asarray(material)
    times_h = np.asarray(step_times_h, dtype=float)
    nx, nz = mat.shape
    if (ex.size - 1, ez.size - 1) != (nx, nz):
        raise ValueError("material shape does not match the edges")

    mesh = fipy.Grid2D(dx=np.diff(ex), dy=np.diff(ez)) + ((ex[0],), (ez[0],))
    order = mat.ravel(order="F")  # FiPy numbers cells x first: i + nx j
    concrete = order == CONCRETE
    solid = order != VOID
    volume_m3 = np.asarray(mesh.cellVolumes)

    k_cell = fipy.CellVariable(
        mesh=mesh,
        value=np.select(
            [concrete, order == GROUND], [CONCRETE_CONDUCTIVITY_W_MK, GROUND_CONDUCTIVITY_W_MK]
        ),
    )
    # Harmonic mean weighted by the face-to-centre distances (0 if either side has k = 0).
    k_face = fipy.FaceVariable(mesh=mesh, value=np.asarray(k_cell.harmonicFaceValue))
    rho_c = np.select(
        [concrete, order == GROUND],
        [
            CONCRETE_DENSITY_KG_M3 * CONCRETE_SPECIFIC_HEAT_J_KGK,
            GROUND_DENSITY_KG_M3 * GROUND_SPECIFIC_HEAT_J_KGK,
        ],
        CONCRETE_DENSITY_KG_M3 * CONCRETE_SPECIFIC_HEAT_J_KGK,  # void: any positive capacity
    )
    capacity = fipy.CellVariable(mesh=mesh, value=rho_c)

    air, deep = _exposed_faces(ex, ez, mat)
    n = mesh.numberOfCells
    deep_g_w_k = np.bincount(deep["cell"], deep["area_m2"] / deep["half_resistance_m2k_w"], n)
    sink = fipy.CellVariable(mesh=mesh, value=0.0)  # sum of G/V [W/(m3 K)]
    load = fipy.CellVariable(mesh=mesh, value=0.0)  # sum of G T_env / V [W/m3]
    heat = fipy.CellVariable(mesh=mesh, value=0.0)  # hydration heat [W/m3]

    initial = np.where(concrete, PLACEMENT_C, GROUND_INITIAL_C)
    temperature = fipy.CellVariable(mesh=mesh, value=initial, hasOld=True)
    equation = fipy.TransientTerm(coeff=capacity) == (
        fipy.DiffusionTerm(coeff=k_face) - fipy.ImplicitSourceTerm(coeff=sink) + load + heat
    )
    # FiPy's LU solve returns the initial guess when its residual is already below tolerance
    # x |RHS|; with the default tolerance (1e-5) late sweeps were skipped and the temperatures
    # drifted 0.01 C from the backward-Euler solution within 100 steps.
    solver = fipy.LinearLUSolver(tolerance=LINEAR_TOLERANCE, criterion="RHS")

    te_h = np.zeros(n)
    alpha = np.zeros(n)
    top = _sensor_weights(TOP_SENSOR_M, ex, ez, mat)
    side = _sensor_weights(SIDE_SENSOR_M, ex, ez, mat)

    def record(values: NDArray[np.float64]) -> tuple[float, float, float]:
        return (
            float(values[concrete].max()),
            float(values[top[0]] @ top[1]),
            float(values[side[0]] @ side[1]),
        )

    series = [record(initial)]
    sweeps = 0
    start = time.perf_counter()
    for t0_h, t1_h in zip(times_h[:-1], times_h[1:], strict=True):
        dt_h = t1_h - t0_h
        dt_s = dt_h * _SECONDS_PER_HOUR
        air_c = float(air_temperature_c(t1_h))
        u = 1.0 / (air["cover_r_m2k_w"] + 1.0 / film_coefficient_w_m2k(air_c))
        air_g_w_k = np.bincount(
            air["cell"], air["area_m2"] / (air["half_resistance_m2k_w"] + 1.0 / u), n
        )
        sink.setValue((air_g_w_k + deep_g_w_k) / volume_m3)
        load.setValue((air_g_w_k * air_c + deep_g_w_k * DEEP_C) / volume_m3)
        temperature.updateOld()
        for _ in range(max_sweeps):
            before = np.array(temperature.value)
            te_new = te_h + dt_h * arrhenius_factor(before)
            alpha_new = degree_of_hydration(te_new)
            released = TOTAL_HEAT_J_KG * CEMENTITIOUS_KG_M3 * (alpha_new - alpha) / dt_s
            heat.setValue(np.where(concrete, released, 0.0))
            equation.sweep(var=temperature, dt=dt_s, solver=solver)
            sweeps += 1
            change = np.abs(np.asarray(temperature.value) - before)[solid].max()
            if change < sweeps_tolerance_c:
                break
        values = np.array(temperature.value)
        te_h = np.where(concrete, te_h + dt_h * arrhenius_factor(values), 0.0)
        alpha = np.where(concrete, degree_of_hydration(te_h), 0.0)
        series.append(record(values))
    seconds = time.perf_counter() - start
    if not all(math.isfinite(v) for row in series for v in row):
        raise RuntimeError("FiPy march produced non-finite temperatures")

    core_c, top_c, side_c = (np.array(column) for column in zip(*series, strict=True))
    return {
        "time_h": times_h,
        "core_c": core_c,
        "top_c": top_c,
        "side_c": side_c,
        "peak_c": float(core_c.max()),
        "max_differential_c": float((core_c - side_c).max()),
        "cells": int(n),
        "sweeps": sweeps,
        "seconds": seconds,
    }
