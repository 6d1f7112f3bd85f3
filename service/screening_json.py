"""Strength and cracking screening parts of a forecast response (model/screening.py)."""

from typing import Any

import numpy as np

from model.results import Forecast
from model.scenario import Scenario
from model.screening import CrackingSettings, cracking_screening, in_place_strength
from model.strength import StrengthMaturity, fit_strength_maturity
from service.errors import InvalidScenarioError
from service.schemas import ScenarioIn, StrengthIn

SCREENING_CAUTION = (
    "Strength and cracking figures are screening estimates from maturity and simple restraint "
    "relations; form removal, loading and crack control decisions belong to the engineer of "
    "record, on field-cured or in-place test results."
)


def _rounded(values: np.ndarray, digits: int = 3) -> list[float | None]:
    return [None if not np.isfinite(v) else round(float(v), digits) for v in values]


def strength_relation(
    strength: StrengthIn, activation_energy_j_mol: float
) -> tuple[StrengthMaturity, dict[str, Any]]:
    """The relation given, or fitted to the lab cylinders; with a description for the body."""
    if strength.lab is not None:
        try:
            relation, errors = fit_strength_maturity(
                [c.age_h for c in strength.lab],
                [c.temperature_c for c in strength.lab],
                [c.strength_mpa for c in strength.lab],
                strength.form,
                activation_energy_j_mol,
            )
        except (ValueError, RuntimeError) as error:
            raise InvalidScenarioError(
                [{"field": "strength.lab", "message": f"cannot fit the relation: {error}"}]
            ) from error
        described = {
            "origin": f"fitted by least squares to {len(strength.lab)} cylinders",
            "standard_errors": {k: round(v, 4) for k, v in errors.items()},
        }
    else:
        relation = StrengthMaturity(
            strength.form,
            strength.ultimate_mpa,  # type: ignore[arg-type]
            tau_h=strength.tau_h,
            beta=strength.beta,
            rate_per_h=strength.rate_per_h,
            offset_h=strength.offset_h,
        )
        described = {"origin": "given"}
    coefficients = {k: round(v, 4) for k, v in relation.coefficients().items()}
    return relation, {
        "form": relation.form,
        "ultimate_mpa": round(relation.ultimate_mpa, 3),
        **coefficients,
        "activation_energy_j_mol": activation_energy_j_mol,
        **described,
    }


def screening_parts(
    request: ScenarioIn, scenario: Scenario, result: Forecast
) -> tuple[dict[str, Any], dict[str, Any]]:
    """(summary additions, series additions) for strength and cracking, if asked for."""
    if request.strength is None:
        return {}, {}
    ea = (
        request.strength.activation_energy_j_mol
        or scenario.concrete.hydration.activation_energy_j_mol
    )
    relation, described = strength_relation(request.strength, ea)
    strength = in_place_strength(result, relation, ea, tuple(request.strength.targets_mpa))
    summary: dict[str, Any] = {
        "strength": {
            "relation": described,
            "targets": [
                {
                    "target_mpa": target,
                    "reached_h": {
                        k: None if v is None else round(v, 2) for k, v in reached.items()
                    },
                }
                for target, reached in strength.reached_h.items()
            ],
            "final_core_mpa": round(float(strength.core_mpa[-1]), 2),
            "final_surface_mpa": round(float(strength.surface_mpa[-1]), 2),
            "caution": SCREENING_CAUTION,
        }
    }
    series: dict[str, Any] = {
        "core_strength_mpa": _rounded(strength.core_mpa, 2),
        "surface_strength_mpa": _rounded(strength.surface_mpa, 2),
        "sensors_strength_mpa": {s: _rounded(v, 2) for s, v in strength.sensors_mpa.items()},
    }
    if request.cracking is not None:
        settings = CrackingSettings(**request.cracking.model_dump())
        cracking = cracking_screening(result, strength, settings)
        allowed = cracking.allowable_differential_c
        summary["cracking"] = {
            "max_index": round(cracking.max_index, 3),
            "max_index_time_h": cracking.max_index_time_h,
            "max_internal_stress_mpa": round(float(cracking.internal_stress_mpa.max()), 3),
            "max_external_stress_mpa": round(float(cracking.external_stress_mpa.max()), 3),
            "min_allowable_differential_c": (
                round(float(np.nanmin(allowed)), 2) if np.isfinite(allowed).any() else None
            ),
            "settings": settings.__dict__,
            "caution": SCREENING_CAUTION,
        }
        series.update(
            cracking_index=_rounded(cracking.index),
            internal_stress_mpa=_rounded(cracking.internal_stress_mpa),
            external_stress_mpa=_rounded(cracking.external_stress_mpa),
            allowable_differential_c=_rounded(allowed, 2),
        )
    return summary, series
