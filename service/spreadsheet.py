"""Flat query parameters for spreadsheet web queries (GET /v1/forecasts), mapped to a scenario.

A spreadsheet cell can only fetch a URL, so the common cases of a scenario are flattened into
query parameters with defaults; anything richer is a POST with a JSON scenario.
"""

from typing import Any, Literal

from service.schemas import MIN_DIMENSION_M, F, Strict


class SpreadsheetQueryIn(Strict):
    """Query parameters of GET /v1/forecasts (SI names; with units=us see the README)."""

    shape: Literal["slab", "section", "block"] = F("Element shape", "slab", default="slab")
    thickness_m: float | None = F(
        "Slab thickness [m]", 2.0, ge=MIN_DIMENSION_M, le=20, default=None
    )
    width_m: float | None = F(
        "Section or block width [m]", 4.0, ge=MIN_DIMENSION_M, le=100, default=None
    )
    height_m: float | None = F(
        "Section or block height [m]", 3.0, ge=MIN_DIMENSION_M, le=50, default=None
    )
    length_m: float | None = F("Block length [m]", 12.0, ge=MIN_DIMENSION_M, le=100, default=None)
    cement_kg_m3: float = F("Portland cement content [kg/m3]", 350, ge=0, le=1500)
    fly_ash_kg_m3: float = F("Fly ash content [kg/m3]", 0, ge=0, le=1500, default=0.0)
    slag_kg_m3: float = F("Slag cement content [kg/m3]", 0, ge=0, le=1500, default=0.0)
    water_kg_m3: float = F("Mixing water [kg/m3]", 160, gt=0, le=500)
    cement_type: Literal["type_i", "type_ii", "type_iii", "type_iv", "type_v"] = F(
        "ASTM C150 type of the cement", "type_i", default="type_i"
    )
    placement_c: float = F("Placement temperature [C]", 18.0, ge=-10, le=60)
    air_mean_c: float = F("Mean air temperature [C]", 15.0, ge=-60, le=120)
    air_range_c: float = F(
        "Daily air temperature range, max minus min [C]", 10.0, ge=0, le=60, default=0.0
    )
    wind_m_s: float = F("Wind speed [m/s]", 2.0, ge=0, le=60, default=2.0)
    top_r_m2k_w: float = F("Top insulation R [m2 K/W]", 0.5, ge=0, le=20, default=0.0)
    sides_r_m2k_w: float = F(
        "Side formwork or insulation R [m2 K/W]", 0.15, ge=0, le=20, default=0.0
    )
    bottom: Literal["ground", "adiabatic", "exposed"] = F(
        "Bottom condition: on the default soil layer (as POST), adiabatic, or bare to the air",
        "ground",
        default="ground",
    )
    ground_c: float | None = F(
        "Deep ground temperature [C]; default: air_mean_c", 12.0, ge=-60, le=120, default=None
    )
    duration_h: float = F("Forecast length [h]", 168.0, gt=0, le=2000, default=168.0)
    output_interval_h: float = F(
        "Spacing of the reported rows [h]", 1.0, ge=0.01, le=48, default=1.0
    )
    max_temperature_c: float = F("Maximum temperature limit [C]", 70.0, gt=0, le=120, default=70.0)
    max_differential_c: float = F("Differential limit [C]", 19.0, gt=0, le=100, default=19.0)

    def scenario_payload(self) -> dict[str, Any]:
        """The equivalent JSON scenario for POST /v1/forecasts (validated again there)."""
        element: dict[str, Any] = {"shape": self.shape}
        if self.shape == "slab":
            element["thickness_m"] = self.thickness_m
        else:
            element.update(width_m=self.width_m, height_m=self.height_m)
            if self.shape == "block":
                element["length_m"] = self.length_m
        ambient: dict[str, Any] = {"wind_m_s": self.wind_m_s}
        if self.air_range_c > 0:
            ambient["daily_min_c"] = self.air_mean_c - self.air_range_c / 2
            ambient["daily_max_c"] = self.air_mean_c + self.air_range_c / 2
        else:
            ambient["air_temperature_c"] = self.air_mean_c
        faces: dict[str, Any] = {"top": {"insulation_r_m2k_w": self.top_r_m2k_w}}
        if self.shape != "slab":
            faces["sides"] = {"formwork_r_m2k_w": self.sides_r_m2k_w}
        payload: dict[str, Any] = {
            "element": element,
            "mix": {
                "cement_kg_m3": self.cement_kg_m3,
                "fly_ash_kg_m3": self.fly_ash_kg_m3,
                "slag_kg_m3": self.slag_kg_m3,
                "water_kg_m3": self.water_kg_m3,
                "cement_type": self.cement_type,
            },
            "placement": {"temperature_c": self.placement_c},
            "ambient": ambient,
            "faces": faces,
            "duration_h": self.duration_h,
            "output_interval_h": self.output_interval_h,
            "limits": {
                "max_temperature_c": self.max_temperature_c,
                "max_differential_c": self.max_differential_c,
            },
        }
        if self.bottom != "ground":
            faces["bottom"] = {"adiabatic": self.bottom == "adiabatic"}
        elif self.ground_c is not None:
            payload["ground"] = {"deep_temperature_c": self.ground_c}
        return payload
