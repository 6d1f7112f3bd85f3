"""Rectilinear cell-centred grids: graded axes and the cell map of element, ground and void.

Every domain is stored as a 3D array of cells (x across the width, y along the length, z up);
a slab has one cell in x and y (1 m2 of plan), a section one cell in y (1 m of length). When the
two faces across an axis have the same condition, only half the element is meshed and the cut is
a symmetry (adiabatic) plane.
"""

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from model.scenario import Resolution, Scenario

VOID, CONCRETE, GROUND = 0, 1, 2
"""Cell materials."""

_SAMPLES_PER_AXIS = 20001


def graded_edges(
    length_m: float,
    fine_low: bool,
    fine_high: bool,
    resolution: Resolution,
    min_cells: int = 4,
    max_cell_m: float | None = None,
    growth: float | None = None,
) -> NDArray[np.float64]:
    """Cell edges from 0 to ``length_m``, small at the fine ends and growing inward [m].

    The target cell size at distance d from the nearest fine end is
    ``min(max_cell, surface_cell + (growth - 1) d)``, the continuous form of a geometric
    progression; edges are placed so each cell spans one unit of the integral of 1/size.
    ``max_cell`` is ``max_cell_m`` if given, else the smaller of the resolution's largest cell
    and ``length_m / resolution.min_cells_across``; ``growth`` is the resolution's unless given.
    """
    if growth is None:
        growth = resolution.growth
    if max_cell_m is None:
        max_cell_m = min(resolution.max_cell_m, length_m / resolution.min_cells_across)
    x = np.linspace(0.0, length_m, _SAMPLES_PER_AXIS)
    distance = np.full_like(x, np.inf)
    if fine_low:
        distance = np.minimum(distance, x)
    if fine_high:
        distance = np.minimum(distance, length_m - x)
    size = np.minimum(max_cell_m, resolution.surface_cell_m + (growth - 1.0) * distance)
    density = 1.0 / size
    cumulative = np.concatenate([[0.0], np.cumsum(0.5 * (density[1:] + density[:-1]) * np.diff(x))])
    n_cells = max(min_cells, int(np.ceil(cumulative[-1] - 1e-9)))
    edges = np.interp(np.linspace(0.0, cumulative[-1], n_cells + 1), cumulative, x)
    edges[0], edges[-1] = 0.0, length_m
    return edges


@dataclass(frozen=True)
class Domain:
    """The meshed domain.

    Attributes
    ----------
    edges_m : cell edges along x, y, z [m]; z = 0 is the bottom of the element
    material : cell material, shape (nx, ny, nz), VOID / CONCRETE / GROUND
    concrete : index ranges (start, stop) of the concrete block along x, y, z
    mirrored : per axis, whether only half is meshed (the low end is a symmetry plane)
    """

    edges_m: tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]
    material: NDArray[np.int8]
    concrete: tuple[tuple[int, int], tuple[int, int], tuple[int, int]]
    mirrored: tuple[bool, bool]

    @property
    def shape(self) -> tuple[int, int, int]:
        """Number of cells along x, y, z."""
        return self.material.shape  # type: ignore[return-value]

    def centres_m(self, axis: int) -> NDArray[np.float64]:
        """Cell centre coordinates along an axis [m]."""
        e = self.edges_m[axis]
        return 0.5 * (e[1:] + e[:-1])

    def widths_m(self, axis: int) -> NDArray[np.float64]:
        """Cell widths along an axis [m]."""
        return np.diff(self.edges_m[axis])

    def volumes_m3(self) -> NDArray[np.float64]:
        """Cell volumes, shape (nx, ny, nz) [m3]."""
        wx, wy, wz = (self.widths_m(a) for a in range(3))
        return wx[:, None, None] * wy[None, :, None] * wz[None, None, :]


def _ground_edges(length_m: float, resolution: Resolution) -> NDArray[np.float64]:
    """Ground cells, fine next to the element (at 0) and coarser away from it [m]."""
    return graded_edges(
        length_m,
        True,
        False,
        resolution,
        2,
        resolution.max_cell_m * resolution.ground_cell_factor,
        1.0 + resolution.ground_growth_ratio * (resolution.growth - 1.0),
    )


def _plan_axis(
    size_m: float | None, low_face: str, high_face: str, scenario: Scenario, margin_m: float
) -> tuple[NDArray[np.float64], tuple[int, int], bool]:
    """Edges of one plan axis: (edges, concrete index range, mirrored)."""
    if size_m is None:
        return np.array([0.0, 1.0]), (0, 1), False
    res = scenario.settings
    low, high = scenario.face(low_face), scenario.face(high_face)
    mirrored = low == high
    has_ground = scenario.ground is not None
    if mirrored:
        concrete = graded_edges(size_m / 2.0, False, not high.adiabatic or has_ground, res)
        parts = [concrete]
        if has_ground:
            parts.append(size_m / 2.0 + _ground_edges(margin_m, res)[1:])
        edges = np.concatenate(parts)
        return edges, (0, concrete.size - 1), True
    concrete = graded_edges(
        size_m, not low.adiabatic or has_ground, not high.adiabatic or has_ground, res
    )
    if not has_ground:
        return concrete, (0, concrete.size - 1), False
    margin = _ground_edges(margin_m, res)
    left = margin_m - margin[::-1]
    edges = np.concatenate([left, margin_m + concrete[1:], margin_m + size_m + margin[1:]])
    start = left.size - 1
    return edges, (start, start + concrete.size - 1), False


@dataclass(frozen=True)
class _Axes:
    edges_m: tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]
    concrete: tuple[tuple[int, int], tuple[int, int], tuple[int, int]]
    mirrored: tuple[bool, bool]


def _axes(scenario: Scenario) -> _Axes:
    el, res, ground = scenario.element, scenario.settings, scenario.ground
    margin = 0.0
    if ground is not None:
        margin = ground.margin_m if ground.margin_m is not None else ground.depth_m
    ex, cx, mx = _plan_axis(el.width_m, "left", "right", scenario, margin)
    ey, cy, my = _plan_axis(el.length_m, "front", "back", scenario, margin)
    top_fine = not scenario.face("top").adiabatic
    bottom_fine = ground is not None or not scenario.face("bottom").adiabatic
    concrete_z = graded_edges(el.height_m, bottom_fine, top_fine, res)
    if ground is None:
        ez, cz = concrete_z, (0, concrete_z.size - 1)
    else:
        below = -_ground_edges(ground.depth_m, res)[::-1]
        ez = np.concatenate([below, concrete_z[1:]])
        cz = (below.size - 1, ez.size - 1)
    return _Axes((ex, ey, ez), (cx, cy, cz), (mx, my))


def cell_count(scenario: Scenario) -> int:
    """Number of cells the solver computes for the scenario (concrete and ground; the void
    beside an element on a wider ground layer is not computed), without meshing it: the count
    of non-void cells that :func:`build_domain` would produce."""
    axes = _axes(scenario)
    (ex, ey, _), ((x0, x1), (y0, y1), (z0, z1)) = axes.edges_m, axes.concrete
    ground = (ex.size - 1) * (ey.size - 1) * z0
    return int(ground + (x1 - x0) * (y1 - y0) * (z1 - z0))


def build_domain(scenario: Scenario) -> Domain:
    """Mesh the element (and the ground under it) of a scenario."""
    axes = _axes(scenario)
    (ex, ey, ez), (cx, cy, cz) = axes.edges_m, axes.concrete
    material = np.zeros((ex.size - 1, ey.size - 1, ez.size - 1), dtype=np.int8)
    if scenario.ground is not None:
        material[:, :, : cz[0]] = GROUND
    material[cx[0] : cx[1], cy[0] : cy[1], cz[0] : cz[1]] = CONCRETE
    return Domain(
        edges_m=axes.edges_m, material=material, concrete=axes.concrete, mirrored=axes.mirrored
    )
