"""Fresh concrete temperature from its constituents, and the ice or chilled water to reach a
target (the heat balance of the mixing).

References
----------
ACI 207.4R, "Cooling and Insulating Systems for Mass Concrete", and ACI 305R, "Guide to Hot
Weather Concreting", which give the same heat balance (here in SI units, from memory):

``T = [0.22 (Ta Wa + Tc Wc) + Tw Ww + Ta Wwa - 80 Wi] / [0.22 (Wa + Wc) + Ww + Wi + Wwa]``

with masses per m3 of concrete: Wa dry aggregate, Wc cementitious, Ww batch water, Wwa free
moisture on the aggregate, Wi ice (melting at 0 C); 0.22 is the ratio of the specific heats of
the dry solids and water, and 80 C the latent heat of fusion of ice over the specific heat of
water (334 kJ/kg / 4.19 kJ/(kg K)).
"""

from dataclasses import dataclass

SOLIDS_TO_WATER_SPECIFIC_HEAT = 0.22
"""Ratio of the specific heat of aggregate and cement to that of water [-] (ACI 305R)."""
ICE_FUSION_C = 80.0
"""Latent heat of fusion of ice over the specific heat of water [C] (ACI 305R, SI form)."""


@dataclass(frozen=True)
class Batch:
    """Constituents of 1 m3 of concrete [kg/m3] and their temperatures [C].

    Attributes
    ----------
    aggregate_kg_m3, aggregate_c : dry aggregate and its temperature
    cement_kg_m3, cement_c : cementitious materials and their temperature
    water_kg_m3, water_c : total free mixing water (batch water plus ice) and the batch water
        temperature
    aggregate_moisture_kg_m3 : free water carried on the aggregate (at the aggregate
        temperature), part of the free water but not of ``water_kg_m3``
    ice_kg_m3 : ice replacing part of ``water_kg_m3``
    """

    aggregate_kg_m3: float
    aggregate_c: float
    cement_kg_m3: float
    cement_c: float
    water_kg_m3: float
    water_c: float
    aggregate_moisture_kg_m3: float = 0.0
    ice_kg_m3: float = 0.0


def _heat_terms(b: Batch) -> tuple[float, float]:
    """Numerator without the water and ice terms, and the (ice-independent) denominator."""
    solids = (
        SOLIDS_TO_WATER_SPECIFIC_HEAT
        * (b.aggregate_c * b.aggregate_kg_m3 + b.cement_c * b.cement_kg_m3)
        + b.aggregate_c * b.aggregate_moisture_kg_m3
    )
    mass = (
        SOLIDS_TO_WATER_SPECIFIC_HEAT * (b.aggregate_kg_m3 + b.cement_kg_m3)
        + b.water_kg_m3
        + b.aggregate_moisture_kg_m3
    )
    return solids, mass


def fresh_concrete_temperature_c(batch: Batch) -> float:
    """Temperature of the fresh concrete after mixing [C] (ACI 305R / ACI 207.4R heat balance).

    The ice replaces batch water of the same mass, so the denominator does not change with it.
    """
    solids, mass = _heat_terms(batch)
    batch_water = batch.water_kg_m3 - batch.ice_kg_m3
    return (solids + batch.water_c * batch_water - ICE_FUSION_C * batch.ice_kg_m3) / mass


def ice_for_target_kg_m3(batch: Batch, target_c: float) -> float:
    """Ice [kg/m3] replacing batch water that brings the fresh concrete to ``target_c``.

    Returns 0 when the batch is already at or below the target. The result may exceed the
    total water, which means ice alone cannot reach the target (check against water_kg_m3).
    """
    solids, mass = _heat_terms(batch)
    needed = (solids + batch.water_c * batch.water_kg_m3 - target_c * mass) / (
        batch.water_c + ICE_FUSION_C
    )
    return max(needed, 0.0)


def water_temperature_for_target_c(batch: Batch, target_c: float) -> float:
    """Batch water temperature [C] (no ice) that brings the fresh concrete to ``target_c``;
    below about 1 C chilled water alone cannot do it."""
    solids, mass = _heat_terms(batch)
    return (target_c * mass - solids) / batch.water_kg_m3
