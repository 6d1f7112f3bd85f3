"""Portland cement compositions: the data type and typical ASTM C150 presets.

The presets are typical (average) Bogue compositions and Blaine fineness of North American
cements of each ASTM C150 type, as tabulated by the Portland Cement Association in Kosmatka et al.,
"Design and Control of Concrete Mixtures" (PCA EB001), chapter on portland cements; the values
are from memory, rounded, and stand for "a typical cement of that type", not any product.
Type IV is the exception: the PCA averages recalled for it (C3S 42 %, C2S 32 %) come from old
cements that would not meet the compound limits of ASTM C150 for Type IV (C3S at most 35 %,
C2S at least 40 %, from memory), so its preset moves C3S and C2S inside those limits (34 % and
41 %). Every preset meets the C150 limits checked in tests/test_material_models.py.
Use mill-certificate values when they are known.
"""

from dataclasses import asdict, dataclass


@dataclass(frozen=True)
class CementComposition:
    """Bogue compound composition and fineness of a portland cement.

    Attributes
    ----------
    c3s_pct, c2s_pct, c3a_pct, c4af_pct : Bogue compounds [% by mass]
    so3_pct, free_cao_pct, mgo_pct : oxides [% by mass]
    blaine_m2_kg : Blaine fineness [m2/kg]
    """

    c3s_pct: float
    c2s_pct: float
    c3a_pct: float
    c4af_pct: float
    so3_pct: float
    free_cao_pct: float
    mgo_pct: float
    blaine_m2_kg: float

    def fractions(self) -> dict[str, float]:
        """Mass fractions [-] keyed c3s, c2s, c3a, c4af, so3, free_cao, mgo."""
        return {
            name.removesuffix("_pct"): value / 100.0
            for name, value in asdict(self).items()
            if name.endswith("_pct")
        }


CEMENT_PRESETS: dict[str, CementComposition] = {
    "type_i": CementComposition(55.0, 18.0, 10.0, 8.0, 3.3, 1.0, 2.4, 370.0),
    "type_ii": CementComposition(55.0, 19.0, 6.0, 11.0, 2.8, 1.0, 2.0, 380.0),
    "type_iii": CementComposition(56.0, 15.0, 9.0, 8.0, 3.5, 1.5, 2.2, 550.0),
    "type_iv": CementComposition(34.0, 41.0, 4.0, 15.0, 1.9, 0.5, 1.8, 340.0),
    "type_v": CementComposition(54.0, 22.0, 4.0, 13.0, 2.3, 0.5, 1.9, 380.0),
}
"""Typical compositions per ASTM C150 type (PCA EB001, from memory; see the module note)."""


def cement_preset(name: str) -> CementComposition:
    """The typical composition of an ASTM C150 cement type, e.g. ``"type_i"``.

    Raises
    ------
    ValueError
        If the name is unknown; the message lists the valid names.
    """
    key = name.strip().lower().replace(" ", "_").replace("/", "_")
    if key not in CEMENT_PRESETS:
        raise ValueError(f"unknown cement type {name!r}; expected one of {sorted(CEMENT_PRESETS)}")
    return CEMENT_PRESETS[key]
