"""Point values inside the concrete: near-surface inset layers and sensors, by linear interpolation.

Values are interpolated between cell centres (not read off the nearest cell), see
:func:`axis_weights` for the treatment between the last centre and a face. Every sample is a
fixed linear combination of cell temperatures, so all samples are one sparse matrix product per
step.
"""

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from numpy.typing import NDArray

from model.grid import Domain
from model.scenario import Scenario, Sensor

_AXIS_FACES = (("left", "right"), ("front", "back"), ("bottom", "top"))


def axis_weights(
    coordinate_m: float,
    centres_m: NDArray[np.float64],
    adiabatic_low_m: float | None,
    adiabatic_high_m: float | None,
) -> list[tuple[int, float]]:
    """Interpolation weights of a coordinate on a line of cell centres.

    Parameters
    ----------
    coordinate_m : where to interpolate [m]
    centres_m : increasing cell centre coordinates [m]
    adiabatic_low_m, adiabatic_high_m : position of an adiabatic face (or symmetry plane) at the
        low (high) end [m], None where the face exchanges heat

    Returns
    -------
    (index, weight) pairs summing to 1.

    Notes
    -----
    Between centres: linear. Between the last centre and a face that exchanges heat: linear
    extrapolation of the two nearest centres. Toward an adiabatic face: the even quadratic
    ``T = a + b (x - x_face)^2`` through the two nearest centres, which has zero gradient at the
    face; both are second-order accurate.
    """
    c = centres_m
    if c.size == 1:
        return [(0, 1.0)]
    ends = (
        (adiabatic_low_m, 0, 1, coordinate_m < c[0]),
        (adiabatic_high_m, c.size - 1, c.size - 2, coordinate_m > c[-1]),
    )
    for face, near, far, beyond in ends:
        if face is not None and beyond:
            s = ((coordinate_m - face) ** 2 - (c[near] - face) ** 2) / (
                (c[far] - face) ** 2 - (c[near] - face) ** 2
            )
            return [(near, 1.0 - s), (far, s)]
    i = int(np.clip(np.searchsorted(c, coordinate_m) - 1, 0, c.size - 2))
    w = (coordinate_m - c[i]) / (c[i + 1] - c[i])
    return [(i, 1.0 - w), (i + 1, w)]


@dataclass(frozen=True)
class Sampler:
    """Sample points in the concrete and the matrix that evaluates them from cell temperatures.

    Attributes
    ----------
    matrix : sparse (n_samples, n_solid_cells) interpolation matrix
    face_rows : per exposed face name, the rows of its inset-layer samples (a face cut away by
        symmetry shares the rows of its mirror image)
    sensor_rows : per sensor id, its row
    """

    matrix: sp.csr_array
    face_rows: dict[str, NDArray[np.int64]]
    sensor_rows: dict[str, int]


def _concrete_axes(domain: Domain) -> list[NDArray[np.float64]]:
    centres = []
    for axis in range(3):
        start, stop = domain.concrete[axis]
        centres.append(domain.centres_m(axis)[start:stop])
    return centres


def _concrete_bounds(domain: Domain) -> list[tuple[float, float]]:
    bounds = []
    for axis in range(3):
        start, stop = domain.concrete[axis]
        edges = domain.edges_m[axis]
        bounds.append((float(edges[start]), float(edges[stop])))
    return bounds


def exposed_faces(scenario: Scenario, domain: Domain) -> dict[str, tuple[int, bool]]:
    """Faces of the concrete that exchange heat (not adiabatic, not a symmetry cut).

    Returns a mapping face name -> (axis, is_high_end). The bottom of an element on meshed ground
    counts as exposed.
    """
    names = scenario.element.face_names()
    exposed: dict[str, tuple[int, bool]] = {}
    for axis, (low, high) in enumerate(_AXIS_FACES):
        for name, is_high in ((low, False), (high, True)):
            if name not in names:
                continue
            if axis < 2 and not is_high and domain.mirrored[axis]:
                continue
            if (
                name == "bottom"
                and scenario.ground is not None
                or not scenario.face(name).adiabatic
            ):
                exposed[name] = (axis, is_high)
    return exposed


def build_sampler(
    scenario: Scenario, domain: Domain, solid_numbering: NDArray[np.int64]
) -> Sampler:
    """Sample points for the near-surface layer of every exposed face and for the sensors.

    Parameters
    ----------
    scenario : the scenario (faces, near-surface depth, sensors)
    domain : its mesh
    solid_numbering : for each grid cell (flat index), its solid cell number (-1 for void)
    """
    centres = _concrete_axes(domain)
    bounds = _concrete_bounds(domain)
    exposed = exposed_faces(scenario, domain)
    adiabatic_ends = [
        (
            bounds[axis][0]
            if (axis < 2 and domain.mirrored[axis]) or _is_adiabatic(scenario, _AXIS_FACES[axis][0])
            else None,
            bounds[axis][1] if _is_adiabatic(scenario, _AXIS_FACES[axis][1]) else None,
        )
        for axis in range(3)
    ]
    inset = scenario.near_surface_depth_m
    layer_faces = exposed or {"top": (2, True)}

    def inset_range(axis: int) -> tuple[float, float]:
        lo, hi = bounds[axis]
        names = _AXIS_FACES[axis]
        return (
            lo + inset if names[0] in exposed else lo,
            hi - inset if names[1] in exposed else hi,
        )

    points: list[tuple[float, float, float]] = []
    face_rows: dict[str, NDArray[np.int64]] = {}
    for name, (axis, is_high) in layer_faces.items():
        lo, hi = bounds[axis]
        level = hi - inset if is_high else lo + inset
        lines = []
        for other in range(3):
            if other == axis:
                lines.append(np.array([level]))
                continue
            a, b = inset_range(other)
            c = centres[other]
            lines.append(np.unique(np.concatenate([[a, b], c[(c > a) & (c < b)]])))
        grid = np.stack(np.meshgrid(*lines, indexing="ij"), axis=-1).reshape(-1, 3)
        face_rows[name] = np.arange(len(points), len(points) + grid.shape[0])
        points.extend(map(tuple, grid))
    for axis in (0, 1):
        low, high = _AXIS_FACES[axis]
        if domain.mirrored[axis] and high in face_rows:
            face_rows[low] = face_rows[high]  # the mirror image of the meshed half
    sensor_rows: dict[str, int] = {}
    for sensor in scenario.sensors:
        sensor_rows[sensor.id] = len(points)
        points.append(sensor_point_m(sensor, scenario, domain, bounds))
    shape = domain.shape

    coords = np.asarray(points, dtype=float).reshape(-1, 3)
    # Per axis, the weights of each distinct coordinate (a layer's points share few of them),
    # padded to two (index, weight) pairs: shape (n_points, 2) each.
    index_pairs, weight_pairs = [], []
    for axis in range(3):
        start = domain.concrete[axis][0]
        values, inverse = np.unique(coords[:, axis], return_inverse=True)
        idx = np.zeros((values.size, 2), dtype=np.int64)
        wts = np.zeros((values.size, 2))
        for k, value in enumerate(values):
            weights = axis_weights(float(value), centres[axis], *adiabatic_ends[axis])
            for j, (i, w) in enumerate(weights):
                idx[k, j], wts[k, j] = start + i, w
        index_pairs.append(idx[inverse.ravel()])
        weight_pairs.append(wts[inverse.ravel()])
    ix, iy, iz = (
        index_pairs[0][:, :, None, None],
        index_pairs[1][:, None, :, None],
        index_pairs[2][:, None, None, :],
    )
    flat = (ix * shape[1] + iy) * shape[2] + iz
    vals = (
        weight_pairs[0][:, :, None, None]
        * weight_pairs[1][:, None, :, None]
        * weight_pairs[2][:, None, None, :]
    )
    rows = np.broadcast_to(np.arange(coords.shape[0])[:, None, None, None], vals.shape)
    cols = solid_numbering[flat]
    keep = vals.ravel() != 0.0
    n_solid = int(solid_numbering.max()) + 1
    matrix = sp.csr_array(
        (vals.ravel()[keep], (rows.ravel()[keep], cols.ravel()[keep])),
        shape=(len(points), n_solid),
    )
    return Sampler(matrix=matrix, face_rows=face_rows, sensor_rows=sensor_rows)


def _is_adiabatic(scenario: Scenario, name: str) -> bool:
    if name == "bottom" and scenario.ground is not None:
        return False
    return name not in scenario.element.face_names() or scenario.face(name).adiabatic


def sensor_point_m(
    sensor: Sensor, scenario: Scenario, domain: Domain, bounds: list[tuple[float, float]]
) -> tuple[float, float, float]:
    """Domain coordinates of a sensor [m].

    Raises
    ------
    ValueError
        If the sensor lies outside the concrete; the message names the sensor and the field.
    """
    el = scenario.element
    if not 0.0 <= sensor.depth_m <= el.height_m:
        raise ValueError(
            f"sensor {sensor.id!r}: depth_m {sensor.depth_m} is outside the element "
            f"(0 to {el.height_m} m below the top)"
        )
    coords = []
    for axis, (size, offset, name) in enumerate(
        ((el.width_m, sensor.x_m, "x_m"), (el.length_m, sensor.y_m, "y_m"))
    ):
        if size is None:
            coords.append(0.5 * (bounds[axis][0] + bounds[axis][1]))
            continue
        if abs(offset) > size / 2.0:
            raise ValueError(
                f"sensor {sensor.id!r}: {name} {offset} is outside the element "
                f"(-{size / 2} to {size / 2} m from its centre)"
            )
        if domain.mirrored[axis]:
            coords.append(bounds[axis][0] + abs(offset))
        else:
            coords.append(bounds[axis][0] + size / 2.0 + offset)
    coords.append(bounds[2][1] - sensor.depth_m)
    return coords[0], coords[1], coords[2]
