"""Finite-volume conduction network of a domain: cell links, boundary faces, the sparse matrix.

Each pair of neighbouring solid cells is linked by the conductance of their two half-cells in
series, ``G = A / (d1/(2 k1) + d2/(2 k2))``; each solid cell face on the edge of the solid is a
boundary face, labelled by the face of the element (or of the ground) it lies on.
"""

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from numpy.typing import NDArray

from model.grid import CONCRETE, GROUND, VOID, Domain

_PLAN_FACES = (("left", "right"), ("front", "back"))
SYMMETRY, GROUND_FAR, GROUND_SURFACE, DEEP = "symmetry", "ground_far", "ground_surface", "deep"
"""Labels of boundary faces that are not element faces."""


@dataclass(frozen=True)
class BoundaryFaces:
    """Cell faces on one labelled boundary: active cell index, face area [m2], half width [m]."""

    cell: NDArray[np.int64]
    area_m2: NDArray[np.float64]
    half_width_m: NDArray[np.float64]


@dataclass(frozen=True)
class Network:
    """Conduction network over the solid (non-void) cells, numbered 0..n-1.

    Attributes
    ----------
    flat_index : for each solid cell, its flat index in the (nx, ny, nz) grid
    volume_m3 : cell volumes [m3]
    is_concrete : which solid cells are concrete
    link_p, link_q : the two cells of each internal link
    link_area_m2 : face area of each link [m2]
    link_half_p_m, link_half_q_m : centre-to-face distances on either side [m]
    boundaries : boundary faces by label
    """

    flat_index: NDArray[np.int64]
    volume_m3: NDArray[np.float64]
    is_concrete: NDArray[np.bool_]
    link_p: NDArray[np.int64]
    link_q: NDArray[np.int64]
    link_area_m2: NDArray[np.float64]
    link_half_p_m: NDArray[np.float64]
    link_half_q_m: NDArray[np.float64]
    boundaries: dict[str, BoundaryFaces]

    @property
    def size(self) -> int:
        """Number of solid cells."""
        return self.flat_index.size


def _face_label(material: int, axis: int, high: bool, at_edge: bool, mirrored: bool) -> str:
    if axis == 2:
        if material == CONCRETE:
            return "top" if high else "bottom"
        return GROUND_SURFACE if high else DEEP
    if not high and at_edge and mirrored:
        return SYMMETRY
    if material == GROUND:
        return GROUND_FAR
    return _PLAN_FACES[axis][int(high)]


def build_network(domain: Domain) -> Network:
    """Links and labelled boundary faces of the solid cells of a domain."""
    mat = domain.material
    solid = mat != VOID
    numbering = np.full(mat.shape, -1, dtype=np.int64)
    numbering[solid] = np.arange(int(solid.sum()))
    widths = [domain.widths_m(a) for a in range(3)]
    volume = domain.volumes_m3()

    links: list[tuple[NDArray, ...]] = []
    faces: dict[str, list[tuple[NDArray, NDArray, NDArray]]] = {}
    for axis in range(3):
        n = mat.shape[axis]
        if n == 1:
            # A unit-thickness plan axis (slab or section): no faces across it.
            continue
        area = volume / widths[axis].reshape([-1 if a == axis else 1 for a in range(3)])
        half = np.broadcast_to(
            0.5 * widths[axis].reshape([-1 if a == axis else 1 for a in range(3)]), mat.shape
        )
        lo = [slice(None)] * 3
        hi = [slice(None)] * 3
        lo[axis], hi[axis] = slice(0, n - 1), slice(1, n)
        lo_t, hi_t = tuple(lo), tuple(hi)
        both = solid[lo_t] & solid[hi_t]
        links.append(
            (
                numbering[lo_t][both],
                numbering[hi_t][both],
                area[lo_t][both],
                half[lo_t][both],
                half[hi_t][both],
            )
        )
        for high in (False, True):
            neighbour_solid = np.zeros(mat.shape, dtype=bool)
            inner = hi_t if not high else lo_t
            outer = lo_t if not high else hi_t
            neighbour_solid[inner] = solid[outer]
            at_edge = np.zeros(mat.shape, dtype=bool)
            edge = [slice(None)] * 3
            edge[axis] = slice(n - 1, n) if high else slice(0, 1)
            at_edge[tuple(edge)] = True
            open_face = solid & ~neighbour_solid
            for material in (CONCRETE, GROUND):
                for edge_flag in (False, True):
                    sel = open_face & (mat == material) & (at_edge == edge_flag)
                    if not sel.any():
                        continue
                    label = _face_label(
                        material,
                        axis,
                        high,
                        edge_flag,
                        domain.mirrored[axis] if axis < 2 else False,
                    )
                    faces.setdefault(label, []).append((numbering[sel], area[sel], half[sel]))

    link_p, link_q, link_area, half_p, half_q = (
        np.concatenate(parts) for parts in zip(*links, strict=True)
    )
    boundaries = {
        label: BoundaryFaces(*(np.concatenate(parts) for parts in zip(*groups, strict=True)))
        for label, groups in faces.items()
    }
    return Network(
        flat_index=np.flatnonzero(solid.ravel()),
        volume_m3=volume[solid],
        is_concrete=mat[solid] == CONCRETE,
        link_p=link_p,
        link_q=link_q,
        link_area_m2=link_area,
        link_half_p_m=half_p,
        link_half_q_m=half_q,
        boundaries=boundaries,
    )


def link_conductance_w_k(
    network: Network, conductivity_w_mk: NDArray[np.float64]
) -> NDArray[np.float64]:
    """Conductance of each internal link [W/K]: ``A / (d1/(2 k1) + d2/(2 k2))``."""
    k = conductivity_w_mk
    return network.link_area_m2 / (
        network.link_half_p_m / k[network.link_p] + network.link_half_q_m / k[network.link_q]
    )


def link_diagonal_w_k(network: Network, link_w_k: NDArray[np.float64]) -> NDArray[np.float64]:
    """The links' part of the diagonal of the conduction matrix K [W/K]: the sum of each
    cell's link conductances (the solver adds the boundary conductances), so that the net heat
    gain of the cells is ``-K T + g``."""
    n = network.size
    return np.bincount(network.link_p, link_w_k, n) + np.bincount(network.link_q, link_w_k, n)


class SymmetricPattern:
    """The fixed sparsity pattern of the network's matrices (links plus diagonal), built once;
    each matrix is then made by placing values, without sorting or summing again."""

    def __init__(self, network: Network) -> None:
        n, links = network.size, network.link_p.size
        rows = np.concatenate([network.link_p, network.link_q, np.arange(n)])
        cols = np.concatenate([network.link_q, network.link_p, np.arange(n)])
        order = sp.csr_array((np.arange(rows.size, dtype=float) + 1.0, (rows, cols)), shape=(n, n))
        order.sort_indices()
        self._position = order.data.astype(np.int64) - 1
        self._diagonal_position = np.flatnonzero(self._position >= 2 * links)[
            np.argsort(self._position[self._position >= 2 * links])
        ]
        self._indices, self._indptr = order.indices, order.indptr
        self._shape = (n, n)
        self.tridiagonal = bool(
            np.array_equal(network.link_p, np.arange(n - 1))
            and np.array_equal(network.link_q, network.link_p + 1)
        )
        """Whether the links are exactly those of each cell to the next (slabs, and batches of
        slabs): the link values are then the first off-diagonal and tridiagonal solves apply."""

    def tridiagonal_product(
        self,
        link_values: NDArray[np.float64],
        diagonal: NDArray[np.float64],
        x: NDArray[np.float64],
    ) -> NDArray[np.float64]:
        """``matrix(link_values, diagonal) @ x`` for a tridiagonal pattern, without building
        the matrix (2D/3D grids use the sparse matrix: see :meth:`shifted`)."""
        y = diagonal * x
        y[:-1] += link_values * x[1:]
        y[1:] += link_values * x[:-1]
        return y

    def matrix(
        self, link_values: NDArray[np.float64], diagonal: NDArray[np.float64]
    ) -> sp.csr_array:
        """The symmetric matrix with ``link_values`` off the diagonal (at both (p, q) and (q, p))
        and ``diagonal`` on it; being symmetric, it is its own CSC form as well."""
        values = np.concatenate([link_values, link_values, diagonal])
        return sp.csr_array(
            (values[self._position], self._indices, self._indptr), shape=self._shape
        )

    def shifted(
        self, link_matrix: sp.csr_array, scale: float, diagonal: NDArray[np.float64]
    ) -> sp.csr_array:
        """``scale * link_matrix`` with ``diagonal`` on its diagonal, for a ``link_matrix`` made
        by :meth:`matrix` (same pattern): one product and a scatter, without gathering."""
        values = scale * link_matrix.data
        values[self._diagonal_position] = diagonal
        return sp.csr_array((values, self._indices, self._indptr), shape=self._shape)


def boundary_conductance_w_k(
    faces: BoundaryFaces,
    conductivity_w_mk: NDArray[np.float64],
    surface_w_m2k: float | NDArray[np.float64],
) -> NDArray[np.float64]:
    """Conductance from each boundary cell centre to its surroundings [W/K].

    The half cell is in series with the surface conductance U [W/(m2 K)], one value or one per
    face (``inf`` for a fixed temperature face): ``G = A / (d/(2k) + 1/U)``.
    """
    resistance = faces.half_width_m / conductivity_w_mk[faces.cell] + 1.0 / np.asarray(
        surface_w_m2k, dtype=float
    )
    return faces.area_m2 / resistance


def replicate(network: Network, copies: int) -> Network:
    """``copies`` copies of a network in one, numbered copy after copy (cell ``i`` of copy ``c``
    is ``c * n + i``), so that many variants of a forecast step as one system.

    Each copy's last cell is joined to the next copy's first by a link of zero area, which
    carries no heat; a slab's links thus stay one unbroken chain and its matrix tridiagonal.
    """
    n = network.size
    shifts = n * np.arange(copies)[:, None]

    def offset(cells: NDArray[np.int64], join: int) -> NDArray[np.int64]:
        joined = np.append(cells, join)[None, :] + shifts
        return joined.ravel()[:-1]

    def tile(values: NDArray, join: float = 0.0) -> NDArray:
        return np.tile(np.append(values, join), copies)[:-1]

    return Network(
        flat_index=np.tile(network.flat_index, copies),
        volume_m3=np.tile(network.volume_m3, copies),
        is_concrete=np.tile(network.is_concrete, copies),
        link_p=offset(network.link_p, n - 1),
        link_q=offset(network.link_q, n),
        link_area_m2=tile(network.link_area_m2),
        link_half_p_m=tile(network.link_half_p_m, 1.0),
        link_half_q_m=tile(network.link_half_q_m, 1.0),
        boundaries={
            label: BoundaryFaces(
                (f.cell[None, :] + shifts).ravel(),
                np.tile(f.area_m2, copies),
                np.tile(f.half_width_m, copies),
            )
            for label, f in network.boundaries.items()
        },
    )
