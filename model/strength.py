"""Compressive strength from maturity: the strength-maturity relations of ASTM C1074.

A strength-maturity relation gives the compressive strength of a mix as a function of its
equivalent age at a reference temperature. It is fitted to cylinders cured at known constant
temperatures and tested at known ages (:func:`fit_strength_maturity`), then applied to the
equivalent age of a forecast (``Forecast.core_equivalent_age_h``, at 21.1 C) to estimate the
in-place strength and the time a target strength is reached (:func:`time_to_strength_h`).

References
----------
ASTM C1074, "Standard Practice for Estimating Concrete Strength by the Maturity Method",
Appendix X1 (strength-maturity relations).
Freiesleben Hansen, P. and Pedersen, E. J. (1985), "Curing of concrete structures", CEB
Information Bulletin 166 (exponential strength function; from memory).
Carino, N. J. (1984), "The maturity method: theory and application", Cement, Concrete, and
Aggregates 6(2), 61-73 (hyperbolic strength function; from memory).
"""

from collections.abc import Callable
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.optimize import least_squares

from model.maturity import HYDRATION_REFERENCE_C, arrhenius_factor

StrengthForm = Literal["exponential", "hyperbolic"]

_TE_FLOOR_H = 1e-12
"""Smallest equivalent age used in ``(tau/te)**beta``, so that S(0) = 0 without a warning [h]."""

INITIAL_ULTIMATE_RATIO = 1.2
"""Initial guess of the limiting strength as a multiple of the highest test result [-]
(common practice, no source: a fit starts above the data it must approach)."""


def exponential_strength_mpa(
    equivalent_age_h: ArrayLike, ultimate_mpa: float, tau_h: float, beta: float
) -> NDArray[np.float64]:
    """Compressive strength at an equivalent age, exponential form [MPa].

    Parameters
    ----------
    equivalent_age_h : Arrhenius equivalent age at the reference temperature [h]
    ultimate_mpa : limiting strength Su [MPa]
    tau_h : characteristic time constant tau [h]
    beta : shape parameter [-]

    Returns
    -------
    Compressive strength S [MPa]; zero at te = 0.

    Notes
    -----
    ``S(te) = Su * exp(-(tau/te)**beta)`` (Freiesleben Hansen & Pedersen 1985; ASTM C1074,
    Appendix X1). At ``te = tau`` the strength is ``Su/e``.
    """
    te = np.maximum(np.asarray(equivalent_age_h, dtype=float), _TE_FLOOR_H)
    return ultimate_mpa * np.exp(-((tau_h / te) ** beta))


def hyperbolic_strength_mpa(
    age_h: ArrayLike, ultimate_mpa: float, rate_per_h: float, offset_h: float
) -> NDArray[np.float64]:
    """Compressive strength at an age, hyperbolic form [MPa].

    Parameters
    ----------
    age_h : equivalent age at the reference temperature [h]: either the Arrhenius equivalent age
        (:func:`model.maturity.equivalent_age_h`) or the Nurse-Saul age at the reference
        temperature, ``M / (Tr - T0)`` with M from :func:`model.maturity.nurse_saul_factor_ch`.
        ``rate_per_h`` and ``offset_h`` then belong to that reference temperature.
    ultimate_mpa : limiting strength Su [MPa]
    rate_per_h : rate constant k at the reference temperature [1/h]
    offset_h : age t0 at which strength development is assumed to begin [h]

    Returns
    -------
    Compressive strength S [MPa]; zero up to ``t0``.

    Notes
    -----
    ``S(t) = Su * k (t - t0) / (1 + k (t - t0))`` for ``t > t0``, 0 otherwise (ASTM C1074,
    Appendix X1; Carino 1984). At ``k (t - t0) = 1`` the strength is ``Su/2``.
    """
    x = rate_per_h * np.maximum(np.asarray(age_h, dtype=float) - offset_h, 0.0)
    return ultimate_mpa * x / (1.0 + x)


STRENGTH_FORMS: dict[str, tuple[Callable[..., NDArray[np.float64]], tuple[str, ...]]] = {
    "exponential": (exponential_strength_mpa, ("ultimate_mpa", "tau_h", "beta")),
    "hyperbolic": (hyperbolic_strength_mpa, ("ultimate_mpa", "rate_per_h", "offset_h")),
}
"""Strength-maturity forms: the function and the names of its coefficients, in fitting order."""


def strength_form(
    name: str,
) -> tuple[Callable[..., NDArray[np.float64]], tuple[str, ...]]:
    """The strength function of a form and its coefficient names, e.g. ``"exponential"``.

    Raises
    ------
    ValueError
        If the form is unknown; the message lists the valid forms.
    """
    if name not in STRENGTH_FORMS:
        raise ValueError(
            f"unknown strength-maturity form {name!r}; expected one of {sorted(STRENGTH_FORMS)}"
        )
    return STRENGTH_FORMS[name]


@dataclass(frozen=True)
class StrengthMaturity:
    """A strength-maturity relation of a mix.

    Attributes
    ----------
    form : "exponential" (uses tau_h, beta) or "hyperbolic" (uses rate_per_h, offset_h)
    ultimate_mpa : limiting strength Su [MPa]
    tau_h : exponential time constant [h]
    beta : exponential shape parameter [-]
    rate_per_h : hyperbolic rate constant k [1/h]
    offset_h : hyperbolic age at which strength gain begins t0 [h]
    reference_c : reference temperature of the equivalent age the relation is written in [C]
    activation_energy_j_mol : apparent activation energy used to compute that equivalent age,
        if known [J/mol]
    """

    form: StrengthForm
    ultimate_mpa: float
    tau_h: float | None = None
    beta: float | None = None
    rate_per_h: float | None = None
    offset_h: float | None = None
    reference_c: float = HYDRATION_REFERENCE_C
    activation_energy_j_mol: float | None = None

    def __post_init__(self) -> None:
        _, names = strength_form(self.form)
        missing = [name for name in names if getattr(self, name) is None]
        if missing:
            raise ValueError(f"the {self.form} form needs {missing}; got None")

    def coefficients(self) -> dict[str, float]:
        """The coefficients of this form, keyed by name (units as in the attributes)."""
        _, names = strength_form(self.form)
        return {name: float(getattr(self, name)) for name in names}

    def strength_mpa(self, equivalent_age_h: ArrayLike) -> NDArray[np.float64]:
        """Compressive strength at an equivalent age at ``reference_c`` [MPa]."""
        function, _ = strength_form(self.form)
        return function(equivalent_age_h, **self.coefficients())


def _initial_exponential(te: NDArray[np.float64], s: NDArray[np.float64]) -> list[float]:
    """Start values from the linearised form ``ln(-ln(S/Su)) = beta ln(tau) - beta ln(te)``."""
    su = INITIAL_ULTIMATE_RATIO * float(np.max(s))
    usable = (s > 0.0) & (te > 0.0)
    tau, beta = float(np.exp(np.mean(np.log(te[te > 0.0])))), 1.0
    if np.unique(te[usable]).size >= 2:
        slope, intercept = np.polyfit(np.log(te[usable]), np.log(-np.log(s[usable] / su)), 1)
        if slope < 0.0:
            beta = -float(slope)
            tau = float(np.exp(intercept / beta))
    return [su, tau, beta]


def _initial_hyperbolic(te: NDArray[np.float64], s: NDArray[np.float64]) -> list[float]:
    """Start values from the linearised form ``1/S = 1/Su + 1/(Su k t)`` with t0 = 0
    (the reciprocal plot of ASTM C1074, Appendix X1)."""
    su = INITIAL_ULTIMATE_RATIO * float(np.max(s))
    usable = (s > 0.0) & (te > 0.0)
    rate = 1.0 / float(np.median(te[te > 0.0]))
    if np.unique(te[usable]).size >= 2:
        slope, intercept = np.polyfit(1.0 / te[usable], 1.0 / s[usable], 1)
        if slope > 0.0 and intercept > 0.0:
            su, rate = 1.0 / float(intercept), float(intercept / slope)
    return [su, rate, 0.0]


def fit_strength_maturity(
    age_h: ArrayLike,
    temperature_c: ArrayLike,
    strength_mpa: ArrayLike,
    form: StrengthForm,
    activation_energy_j_mol: float,
    reference_c: float = HYDRATION_REFERENCE_C,
) -> tuple[StrengthMaturity, dict[str, float]]:
    """Fit a strength-maturity relation to lab cylinders cured at constant temperatures.

    Parameters
    ----------
    age_h : age of each specimen at test [h]
    temperature_c : constant curing temperature of each specimen (or one for all) [C]
    strength_mpa : measured compressive strength of each specimen [MPa]
    form : "exponential" or "hyperbolic"
    activation_energy_j_mol : apparent activation energy Ea of the mix [J/mol]
    reference_c : reference temperature of the equivalent age [C]; the default, 21.1 C, is the
        one of the forecast's equivalent ages

    Returns
    -------
    The fitted :class:`StrengthMaturity`, and the standard error of each fitted coefficient
    keyed by name (units of the coefficient).

    Raises
    ------
    ValueError
        If the form is unknown, the inputs do not match in size, an age or strength is negative or
        not finite, or there are not more specimens than coefficients.
    RuntimeError
        If the least-squares fit does not converge.

    Notes
    -----
    Each age is converted to equivalent age at the reference temperature,
    ``te = exp(-Ea/R (1/T - 1/Tr)) * t`` (ASTM C1074, the equivalent age at constant T), so that
    cylinders cured at different temperatures fall on one curve. The coefficients are then found
    by bounded nonlinear least squares (``scipy.optimize.least_squares``; all coefficients
    non-negative, the hyperbolic t0 below the earliest age with a non-zero strength), starting
    from the linearised forms. Standard errors are
    ``sqrt(diag((J^T J)^-1) * sum(r^2) / (n - p))`` with J the Jacobian of the residuals r at
    the solution, n specimens and p coefficients (the usual asymptotic estimate); NaN where
    ``J^T J`` is singular.
    """
    function, names = strength_form(form)
    age = np.asarray(age_h, dtype=float).ravel()
    s = np.asarray(strength_mpa, dtype=float).ravel()
    temperature = np.broadcast_to(np.asarray(temperature_c, dtype=float), np.shape(age_h)).ravel()
    if age.shape != s.shape:
        raise ValueError(f"age_h and strength_mpa differ in size: {age.size} and {s.size}")
    if not (
        np.all(np.isfinite(age)) and np.all(np.isfinite(s)) and np.all(np.isfinite(temperature))
    ):
        raise ValueError("age_h, temperature_c and strength_mpa must be finite")
    if np.any(age < 0.0) or np.any(s < 0.0):
        raise ValueError("age_h and strength_mpa must be non-negative")
    if age.size <= len(names):
        raise ValueError(
            f"the {form} form has {len(names)} coefficients; need more specimens, got {age.size}"
        )
    if not np.any(s > 0.0):
        raise ValueError("strength_mpa: at least one strength must be positive")

    te = arrhenius_factor(temperature, activation_energy_j_mol, reference_c) * age
    if form == "exponential":
        x0 = _initial_exponential(te, s)
        upper = [np.inf, np.inf, np.inf]
    else:
        x0 = _initial_hyperbolic(te, s)
        upper = [np.inf, np.inf, float(np.min(te[s > 0.0]))]
    lower = [0.0] * len(names)
    x0 = np.clip(x0, lower, upper)

    def residuals(x: NDArray[np.float64]) -> NDArray[np.float64]:
        return function(te, *x) - s

    result = least_squares(residuals, x0, bounds=(lower, upper), x_scale="jac")
    if not result.success:
        raise RuntimeError(f"strength-maturity fit did not converge: {result.message}")

    dof = age.size - len(names)
    variance = float(np.sum(result.fun**2)) / dof
    try:
        covariance = np.linalg.inv(result.jac.T @ result.jac) * variance
        errors = np.sqrt(np.maximum(np.diag(covariance), 0.0))
    except np.linalg.LinAlgError:
        errors = np.full(len(names), np.nan)

    fitted = dict(zip(names, (float(v) for v in result.x), strict=True))
    relation = StrengthMaturity(
        form=form,
        reference_c=reference_c,
        activation_energy_j_mol=float(activation_energy_j_mol),
        **fitted,
    )
    return relation, dict(zip(names, (float(e) for e in errors), strict=True))


def time_to_strength_h(
    time_h: ArrayLike, strength_mpa: ArrayLike, target_mpa: float
) -> float | None:
    """First time a strength history reaches a target strength [h]; None if it never does.

    Parameters
    ----------
    time_h : times, increasing [h]
    strength_mpa : strength at those times [MPa]
    target_mpa : target strength, e.g. for form removal or post-tensioning [MPa]

    Notes
    -----
    Linear interpolation between the last sample below the target and the first sample at or
    above it; the first time itself if the history starts at or above the target.
    """
    t = np.asarray(time_h, dtype=float)
    s = np.asarray(strength_mpa, dtype=float)
    reached = np.flatnonzero(s >= target_mpa)
    if reached.size == 0:
        return None
    i = int(reached[0])
    if i == 0:
        return float(t[0])
    fraction = (target_mpa - s[i - 1]) / (s[i] - s[i - 1])
    return float(t[i - 1] + fraction * (t[i] - t[i - 1]))
