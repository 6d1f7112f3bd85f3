"""Plain model inputs: the element, its concrete, faces, ground, weather and numerical settings.

These are value objects (frozen dataclasses) in SI units; service/ builds them from requests.
"""

from dataclasses import dataclass, field, replace
from typing import Literal

import numpy as np
from numpy.typing import NDArray

from model.ambient import Ambient
from model.boundaries import CONCRETE_EMISSIVITY
from model.hydration import HydrationParameters
from model.maturity import NURSE_SAUL_DATUM_C
from model.properties import MixMasses

Shape = Literal["slab", "section", "block"]

FACE_NAMES = ("top", "bottom", "left", "right", "front", "back")
"""Faces of an element: top and bottom (all shapes), left/right across the width (section and
block, x axis), front/back along the length (block, y axis)."""


@dataclass(frozen=True)
class Element:
    """Geometry of the placement [m].

    Attributes
    ----------
    shape : "slab" (1D through the thickness), "section" (2D, width x height, long in the third
        direction) or "block" (3D, length x width x height)
    height_m : vertical dimension (the slab thickness) [m]
    width_m : horizontal dimension across the section (x) [m]
    length_m : horizontal dimension along the block (y) [m]
    """

    shape: Shape
    height_m: float
    width_m: float | None = None
    length_m: float | None = None

    def face_names(self) -> tuple[str, ...]:
        """Names of the faces this shape has."""
        return {"slab": FACE_NAMES[:2], "section": FACE_NAMES[:4], "block": FACE_NAMES}[self.shape]


@dataclass(frozen=True)
class Face:
    """Thermal condition of one face.

    Attributes
    ----------
    adiabatic : no heat crosses the face (symmetry plane or perfect insulation)
    insulation_r_m2k_w : insulation blanket resistance [m2 K/W]
    insulation_removal_h : hour after placement when the insulation comes off [h]; None: stays
    formwork_r_m2k_w : formwork resistance [m2 K/W]
    formwork_removal_h : hour when the forms come off [h]; None: they stay
    film_coefficient_w_m2k : total surface coefficient replacing wind and radiation [W/(m2 K)]
    solar_absorptivity : fraction of solar irradiance absorbed on the outer face [-]
    emissivity : long-wave emissivity of the outer face [-]
    conductance_factor : multiplier of the face's overall conductance, for calibration to
        measured temperatures (1: as modelled) [-]
    """

    adiabatic: bool = False
    insulation_r_m2k_w: float = 0.0
    insulation_removal_h: float | None = None
    formwork_r_m2k_w: float = 0.0
    formwork_removal_h: float | None = None
    film_coefficient_w_m2k: float | None = None
    solar_absorptivity: float = 0.0
    emissivity: float = CONCRETE_EMISSIVITY
    conductance_factor: float = 1.0

    def resistance_m2k_w(self, time_h: float) -> float:
        """Resistance of what covers the face at a time [m2 K/W]."""
        total = 0.0
        for r, removal in (
            (self.insulation_r_m2k_w, self.insulation_removal_h),
            (self.formwork_r_m2k_w, self.formwork_removal_h),
        ):
            if removal is None or time_h < removal:
                total += r
        return total

    def removal_times_h(self) -> tuple[float, ...]:
        """Hours at which this face's covering changes [h]."""
        return tuple(
            t for t in (self.insulation_removal_h, self.formwork_removal_h) if t is not None
        )


@dataclass(frozen=True)
class Concrete:
    """Concrete of the placement.

    Attributes
    ----------
    cementitious_kg_m3 : total cementitious content Cc [kg/m3]
    hydration : heat-of-hydration parameters (Hu per kg of cementitious) [see HydrationParameters]
    masses : mix masses for the Van Breugel specific heat and the density [kg/m3]
    hardened_conductivity_w_mk : k_uc of the hydration-dependent conductivity [W/(m K)]
    density_kg_m3 : if set, fixed density [kg/m3]; else the sum of the mix masses
    specific_heat_j_kgk : if set, fixed specific heat [J/(kg K)]; else Van Breugel (1998)
    conductivity_w_mk : if set, fixed conductivity [W/(m K)]; else k_uc (1.33 - 0.33 alpha)
    """

    cementitious_kg_m3: float
    hydration: HydrationParameters
    masses: MixMasses
    hardened_conductivity_w_mk: float = 2.5
    density_kg_m3: float | None = None
    specific_heat_j_kgk: float | None = None
    conductivity_w_mk: float | None = None

    @property
    def density(self) -> float:
        """Density used by the solver [kg/m3]."""
        return self.density_kg_m3 if self.density_kg_m3 is not None else self.masses.density_kg_m3


@dataclass(frozen=True)
class Ground:
    """Soil or rock under the element, meshed with its own properties.

    Attributes
    ----------
    depth_m : depth of the meshed layer below the element [m]
    conductivity_w_mk, density_kg_m3, specific_heat_j_kgk : properties of the layer
    deep_temperature_c : fixed temperature at the bottom of the layer [C]
    initial_temperature_c : temperature of the layer at placement [C]; None: the deep value
    margin_m : meshed ground beyond the element's footprint on each side (2D and 3D) [m];
        None: equal to ``depth_m``; its top is bare to the air, its far sides adiabatic
    """

    depth_m: float = 3.0
    conductivity_w_mk: float = 1.5
    density_kg_m3: float = 1900.0
    specific_heat_j_kgk: float = 900.0
    deep_temperature_c: float = 15.0
    initial_temperature_c: float | None = None
    margin_m: float | None = None


@dataclass(frozen=True)
class Resolution:
    """Numerical settings; the defaults give typical pours within 0.1 C of a converged run.

    Attributes
    ----------
    surface_cell_m : cell size at an exposed face [m]
    growth : cell size growth per cell away from exposed faces [-]
    max_cell_m : largest cell [m]
    min_cells_across : the largest cell is also at most the element dimension over this [-]
    ground_cell_factor : the largest ground cell is this multiple of ``max_cell_m`` [-]
    ground_growth_ratio : ground cells grow this many times faster away from the element than
        concrete cells from a face (growth ``1 + ratio (growth - 1)``) [-]
    max_step_h : largest time step [h]
    first_step_h : first step, and the step after a sudden change at a face [h]
    alpha_change : target largest change of degree of hydration per step [-]
    temperature_change_c : target largest temperature change per step [C]
    error_tolerance_c : target estimated local time-stepping error per step [C]
    """

    surface_cell_m: float = 0.01
    growth: float = 1.2
    max_cell_m: float = 0.10
    min_cells_across: float = 16.0
    ground_cell_factor: float = 3.0
    ground_growth_ratio: float = 1.0
    max_step_h: float = 6.0
    first_step_h: float = 0.05
    alpha_change: float = 0.03
    temperature_change_c: float = 2.0
    error_tolerance_c: float = 0.0005

    def refined(self, factor: float) -> "Resolution":
        """Settings with cells and steps divided by ``factor`` (for convergence studies)."""
        return Resolution(
            surface_cell_m=self.surface_cell_m / factor,
            growth=1.0 + (self.growth - 1.0) / factor,
            max_cell_m=self.max_cell_m / factor,
            min_cells_across=self.min_cells_across * factor,
            ground_cell_factor=self.ground_cell_factor,
            ground_growth_ratio=self.ground_growth_ratio,
            max_step_h=self.max_step_h / factor,
            first_step_h=self.first_step_h / factor,
            alpha_change=self.alpha_change / factor,
            temperature_change_c=self.temperature_change_c / factor,
            error_tolerance_c=self.error_tolerance_c / factor**3,
        )


@dataclass(frozen=True)
class Sensor:
    """A point where the forecast reports temperatures.

    Attributes
    ----------
    id : label
    depth_m : depth below the top face [m]
    x_m, y_m : plan position from the element's centre across the width (x) and along the
        length (y) [m]
    """

    id: str
    depth_m: float
    x_m: float = 0.0
    y_m: float = 0.0


@dataclass(frozen=True)
class Scenario:
    """Everything a forecast needs.

    Attributes
    ----------
    element, concrete, ambient : see their classes
    faces : condition of each face by name (missing faces are bare to the air)
    placement_c : concrete temperature at placement [C]
    duration_h : forecast length [h]
    output_interval_h : spacing of the reported series [h]
    ground : soil or rock layer under the element; None: the bottom face condition applies
    sensors : points to report
    near_surface_depth_m : depth of the near-surface layer inside exposed faces [m]
    nurse_saul_datum_c : datum temperature of the Nurse-Saul factor [C]
    resolution : numerical settings; None: :func:`default_resolution` for the shape
    """

    element: Element
    concrete: Concrete
    ambient: Ambient
    faces: dict[str, Face] = field(default_factory=dict)
    placement_c: float = 20.0
    duration_h: float = 168.0
    output_interval_h: float = 1.0
    ground: Ground | None = None
    sensors: tuple[Sensor, ...] = ()
    near_surface_depth_m: float = 0.05
    nurse_saul_datum_c: float = NURSE_SAUL_DATUM_C
    resolution: Resolution | None = None

    @property
    def settings(self) -> Resolution:
        """The numerical settings in force: the given ones or the shape's default."""
        return (
            self.resolution
            if self.resolution is not None
            else default_resolution(self.element.shape)
        )

    def coarsened(self) -> "Scenario":
        """The scenario on a grid with cells and steps ``COARSENING`` times larger: what
        searches and fits use to locate an answer (plans) or a direction (calibration
        Jacobians) before the scenario's own grid decides."""
        return replace(self, resolution=self.settings.refined(1.0 / COARSENING))

    def face(self, name: str) -> Face:
        """The condition of a face; a face not given is bare concrete exposed to the air."""
        return self.faces.get(name, Face())


@dataclass(frozen=True)
class Variations:
    """Variants of one scenario stepped together as a batch (uncertainty bands, sweeps).

    Every attribute is an array with one entry per variant; the geometry, faces and numerical
    settings are those of the scenario.

    Attributes
    ----------
    placement_shift_c : added to the placement temperature [C]
    air_shift_c : added to every air temperature [C]
    total_heat_factor : multiplies the total heat of hydration Hu [-]
    tau_factor : multiplies the hydration time parameter tau [-]
    top_conductance_factor : multiplies the top face's overall conductance [-]; None: ones
    """

    placement_shift_c: NDArray[np.float64]
    air_shift_c: NDArray[np.float64]
    total_heat_factor: NDArray[np.float64]
    tau_factor: NDArray[np.float64]
    top_conductance_factor: NDArray[np.float64] | None = None

    @property
    def size(self) -> int:
        """Number of variants."""
        return int(np.size(self.placement_shift_c))

    def scenario(self, base: "Scenario", index: int) -> "Scenario":
        """Variant ``index`` as a scenario of its own (what a single forecast of it takes)."""
        hyd = base.concrete.hydration
        hydration = replace(
            hyd,
            total_heat_j_kg=hyd.total_heat_j_kg * float(self.total_heat_factor[index]),
            tau_h=hyd.tau_h * float(self.tau_factor[index]),
        )
        top = base.face("top")
        top = replace(top, conductance_factor=top.conductance_factor * self.top_factors()[index])
        return replace(
            base,
            placement_c=base.placement_c + float(self.placement_shift_c[index]),
            ambient=base.ambient.shifted(float(self.air_shift_c[index])),
            concrete=replace(base.concrete, hydration=hydration),
            faces={**base.faces, "top": top},
        )

    def top_factors(self) -> NDArray[np.float64]:
        """The top face's conductance factor of every variant [-]."""
        if self.top_conductance_factor is None:
            return np.ones(self.size)
        return np.asarray(self.top_conductance_factor, dtype=float)

    @classmethod
    def none(cls, copies: int = 1) -> "Variations":
        """``copies`` variants identical to the scenario."""
        zeros, ones = np.zeros(copies), np.ones(copies)
        return cls(zeros, zeros, ones, ones)


COARSENING = 2.0
"""Cells and steps of :meth:`Scenario.coarsened` are this many times larger (about a tenth of
the cost of a 3D forecast, a quarter of a 2D one; slabs, whose cost is mostly per step, gain
little)."""
BLOCK_RESOLUTION = Resolution(
    surface_cell_m=0.01, growth=1.2, max_cell_m=0.25, ground_growth_ratio=2.0
)
"""Default for 3D blocks: graded toward the faces as slabs and sections are (10 mm growing 20 %
per cell), so that a corner, where the grid errors of three directions add up, stays within
0.1 C of a converged solution (tests/test_block_reference.py; 20 mm growing 30 % per cell was
0.19 C off there), with larger cells (up to 0.25 m) in the interior than slabs and sections.
Ground cells grow 40 % per cell away from the element, which keeps the pier example within the
service's compute budget (72,816 cells instead of 123,480) and moves its series by at most
0.04 C and its near-surface minimum by at most 0.09 C against ground graded like the
concrete (measured)."""


def default_resolution(shape: Shape) -> Resolution:
    """Default numerical settings for a shape."""
    return BLOCK_RESOLUTION if shape == "block" else Resolution()
