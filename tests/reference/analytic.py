"""Closed-form heat-conduction series used as test references.

All solutions are taken from H. S. Carslaw and J. C. Jaeger, *Conduction of Heat in Solids*,
2nd ed., Oxford: Clarendon Press, 1959 (referred to below as "C&J"). The material is homogeneous
and isotropic with constant properties and there is no internal heat generation.

Notation
--------
theta = (T - T_env) / (T_initial - T_env) is the dimensionless excess temperature, where T_env is
the face temperature (fixed faces) or the ambient temperature (convective faces). For a body with
a uniform initial temperature and the same environment temperature on every face, theta of a
rectangle or box is the product of the one-dimensional thetas along each axis (C&J section 1.15,
product solutions; used for the parallelepiped in section 6.3).

Every series is truncated where the first neglected term is below ``_TAIL_TOL`` relative to the
initial excess; ``n_terms`` is therefore a *minimum* number of terms and more are taken at small
Fourier numbers where the series converge slowly.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.optimize import brentq

__all__ = [
    "biot_eigenvalues",
    "box_convective_c",
    "box_fixed_faces_c",
    "convective_theta",
    "fixed_faces_theta",
    "slab_convective_faces_c",
    "slab_fixed_faces_c",
]

_TAIL_TOL = 1e-16
"""Bound on exp(-lambda_N**2 * Fo) for the first neglected term of a series [-]."""

_MAX_TERMS = 200_000
"""Hard cap on the number of series terms (guards against time_s -> 0) [-]."""

_POSITION_TOL = 1e-9
"""Relative tolerance when checking that points lie inside the body [-]."""


def _check_time(time_s: float) -> float:
    t = float(time_s)
    if not np.isfinite(t) or t <= 0.0:
        raise ValueError(f"time_s must be a finite number > 0, got {time_s!r}")
    return t


def _check_positive(name: str, value: float) -> float:
    v = float(value)
    if not np.isfinite(v) or v <= 0.0:
        raise ValueError(f"{name} must be a finite number > 0, got {value!r}")
    return v


def _check_inside(x: NDArray[np.float64], lo: float, hi: float) -> None:
    span = hi - lo
    if np.any(x < lo - _POSITION_TOL * span) or np.any(x > hi + _POSITION_TOL * span):
        raise ValueError(f"positions must lie in [{lo}, {hi}] m")


def _terms_needed(fourier: float, first_root: float, spacing: float, n_min: int) -> int:
    """Return how many terms make exp(-lambda_N**2 * Fo) < _TAIL_TOL at the first omitted root.

    Roots are assumed to satisfy lambda_n >= first_root + (n - 1) * spacing.
    """
    lam_needed = np.sqrt(-np.log(_TAIL_TOL) / fourier)
    n = int(np.ceil((lam_needed - first_root) / spacing)) + 2
    n = max(n_min, n)
    if n > _MAX_TERMS:
        raise ValueError(
            f"Fourier number {fourier:.3e} is too small for the eigenfunction series "
            f"({n} terms needed, at most {_MAX_TERMS} allowed)"
        )
    return n


def fixed_faces_theta(
    x_from_centre_m: ArrayLike,
    time_s: float,
    half_thickness_m: float,
    diffusivity_m2_s: float,
    n_terms: int = 400,
) -> NDArray[np.float64]:
    """Dimensionless excess temperature of a slab -l <= x <= l with both faces held fixed.

    Source: C&J section 3.3 (region -l < x < l, surfaces at zero, initial temperature V):

        theta = (4/pi) * sum_{n>=0} (-1)^n / (2n+1)
                * exp(-kappa (2n+1)^2 pi^2 t / (4 l^2)) * cos((2n+1) pi x / (2 l))

    Parameters
    ----------
    x_from_centre_m : array_like
        Positions measured from the mid-plane, -l <= x <= l [m].
    time_s : float
        Time since the faces were changed to the face temperature, > 0 [s].
    half_thickness_m : float
        Half thickness l [m].
    diffusivity_m2_s : float
        Thermal diffusivity kappa [m2/s].
    n_terms : int, optional
        Minimum number of series terms [-]; more are used when the Fourier number is small.

    Returns
    -------
    numpy.ndarray
        theta = (T - T_face) / (T_initial - T_face), same shape as ``x_from_centre_m`` [-].
    """
    t = _check_time(time_s)
    half = _check_positive("half_thickness_m", half_thickness_m)
    kappa = _check_positive("diffusivity_m2_s", diffusivity_m2_s)
    x = np.asarray(x_from_centre_m, dtype=float)
    _check_inside(x, -half, half)
    fourier = kappa * t / half**2
    n = _terms_needed(fourier, 0.5 * np.pi, np.pi, int(n_terms))
    k = np.arange(n)
    lam = (k + 0.5) * np.pi
    coeff = (4.0 / np.pi) * (-1.0) ** k / (2 * k + 1) * np.exp(-(lam**2) * fourier)
    keep = coeff != 0.0
    lam, coeff = lam[keep], coeff[keep]
    flat = x.reshape(-1)
    theta = np.cos(np.outer(flat / half, lam)) @ coeff
    # The series converges to 0 exactly at the faces only in the limit; enforce it.
    theta[np.isclose(np.abs(flat), half, rtol=0.0, atol=_POSITION_TOL * half)] = 0.0
    return theta.reshape(x.shape)


def slab_fixed_faces_c(
    x_m: ArrayLike,
    time_s: float,
    thickness_m: float,
    diffusivity_m2_s: float,
    initial_c: float,
    face_c: float,
    n_terms: int = 400,
) -> NDArray[np.float64]:
    """Temperature in a slab 0 <= x <= L, initially uniform, both faces held at ``face_c``.

    Source: C&J section 3.3 (region 0 < x < l, ends at zero temperature, constant initial
    temperature V), with v = T - T_face and V = T_initial - T_face:

        v = (4 V / pi) * sum_{n>=0} 1/(2n+1) * exp(-kappa (2n+1)^2 pi^2 t / L^2)
            * sin((2n+1) pi x / L)

    Evaluated through :func:`fixed_faces_theta` (the same series written about the mid-plane).

    Parameters
    ----------
    x_m : array_like
        Positions, 0 <= x <= L [m].
    time_s : float
        Time since the faces were set to ``face_c``, > 0 [s].
    thickness_m : float
        Slab thickness L [m].
    diffusivity_m2_s : float
        Thermal diffusivity kappa [m2/s].
    initial_c : float
        Uniform initial temperature [degC].
    face_c : float
        Temperature imposed on both faces for t > 0 [degC].
    n_terms : int, optional
        Minimum number of series terms [-]; more are used when the Fourier number is small.

    Returns
    -------
    numpy.ndarray
        Temperature, same shape as ``x_m`` [degC].
    """
    thickness = _check_positive("thickness_m", thickness_m)
    x = np.asarray(x_m, dtype=float)
    _check_inside(x, 0.0, thickness)
    half = 0.5 * thickness
    theta = fixed_faces_theta(x - half, time_s, half, diffusivity_m2_s, n_terms)
    return face_c + (initial_c - face_c) * theta


def biot_eigenvalues(biot: float, n_terms: int) -> NDArray[np.float64]:
    """First ``n_terms`` positive roots of lambda * tan(lambda) = Bi.

    Source: C&J section 3.11, the roots alpha_n of alpha tan(alpha) = L with L = l h (their
    eq. for the slab -l < x < l with linear heat transfer at both surfaces).

    The n-th root (n = 1, 2, ...) lies in ((n-1) pi, (n-1/2) pi). It is found with
    :func:`scipy.optimize.brentq` applied to the continuous form
    f(lambda) = lambda sin(lambda) - Bi cos(lambda), which changes sign across every bracket and has
    no poles.

    Parameters
    ----------
    biot : float
        Biot number Bi = h l / k, > 0; ``numpy.inf`` gives the fixed-face roots (n - 1/2) pi [-].
    n_terms : int
        Number of roots [-].

    Returns
    -------
    numpy.ndarray
        Roots lambda_1 < lambda_2 < ..., shape (n_terms,) [-].
    """
    if n_terms < 1:
        raise ValueError("n_terms must be >= 1")
    n = np.arange(1, n_terms + 1)
    if np.isinf(biot):
        return (n - 0.5) * np.pi
    bi = _check_positive("biot", biot)
    roots = np.empty(n_terms)
    for i, ni in enumerate(n):
        lo = (ni - 1) * np.pi
        hi = (ni - 0.5) * np.pi
        roots[i] = brentq(
            lambda lam: lam * np.sin(lam) - bi * np.cos(lam),
            lo,
            hi,
            xtol=1e-15,
            rtol=4.0 * np.finfo(float).eps,
            maxiter=200,
        )
    return roots


def convective_theta(
    x_from_centre_m: ArrayLike,
    time_s: float,
    half_thickness_m: float,
    conductivity_w_mk: float,
    diffusivity_m2_s: float,
    film_w_m2k: float,
    n_terms: int = 60,
) -> NDArray[np.float64]:
    """Dimensionless excess temperature of a plane wall -l <= x <= l with convective faces.

    Source: C&J section 3.11 (slab -l < x < l, initial temperature V, linear heat transfer
    -K dv/dn = H v at x = +/- l into a medium at zero):

        theta = sum_{n>=1} 2 Bi cos(lambda_n x / l) exp(-lambda_n^2 kappa t / l^2)
                / ((lambda_n^2 + Bi^2 + Bi) cos(lambda_n)),
        lambda_n tan(lambda_n) = Bi = h l / k,

    evaluated in the equivalent form with coefficients 4 sin(lambda_n) / (2 lambda_n +
    sin(2 lambda_n)). Equivalently: a slab 0 <= x <= l with an adiabatic face at x = 0.

    Parameters
    ----------
    x_from_centre_m : array_like
        Positions measured from the mid-plane (adiabatic plane), -l <= x <= l [m].
    time_s : float
        Time since exposure to the ambient, > 0 [s].
    half_thickness_m : float
        Half thickness l [m].
    conductivity_w_mk : float
        Thermal conductivity k [W/(m K)].
    diffusivity_m2_s : float
        Thermal diffusivity kappa [m2/s].
    film_w_m2k : float
        Surface film coefficient h, >= 0 (0: insulated, ``numpy.inf``: fixed faces) [W/(m2 K)].
    n_terms : int, optional
        Minimum number of series terms [-]; more are used when the Fourier number is small.

    Returns
    -------
    numpy.ndarray
        theta = (T - T_ambient) / (T_initial - T_ambient), same shape as ``x_from_centre_m`` [-].
    """
    t = _check_time(time_s)
    half = _check_positive("half_thickness_m", half_thickness_m)
    kappa = _check_positive("diffusivity_m2_s", diffusivity_m2_s)
    k = _check_positive("conductivity_w_mk", conductivity_w_mk)
    h = float(film_w_m2k)
    if np.isnan(h) or h < 0.0:
        raise ValueError(f"film_w_m2k must be >= 0, got {film_w_m2k!r}")
    x = np.asarray(x_from_centre_m, dtype=float)
    _check_inside(x, -half, half)
    if h == 0.0:
        return np.ones_like(x)
    if np.isinf(h):
        return fixed_faces_theta(x, t, half, kappa, max(int(n_terms), 1))
    biot = h * half / k
    fourier = kappa * t / half**2
    n = _terms_needed(fourier, 0.0, np.pi, int(n_terms))
    lam = biot_eigenvalues(biot, n)
    coeff = 4.0 * np.sin(lam) / (2.0 * lam + np.sin(2.0 * lam)) * np.exp(-(lam**2) * fourier)
    keep = coeff != 0.0
    lam, coeff = lam[keep], coeff[keep]
    flat = x.reshape(-1)
    theta = np.cos(np.outer(flat / half, lam)) @ coeff
    return theta.reshape(x.shape)


def slab_convective_faces_c(
    x_m: ArrayLike,
    time_s: float,
    half_thickness_m: float,
    conductivity_w_mk: float,
    diffusivity_m2_s: float,
    film_w_m2k: float,
    initial_c: float,
    ambient_c: float,
    n_terms: int = 60,
) -> NDArray[np.float64]:
    """Temperature in a plane wall -l <= x <= l exchanging heat with an ambient on both faces.

    Source: C&J section 3.11 (see :func:`convective_theta` for the series). The Robin condition
    at each face is -k dT/dn = h (T - T_ambient). Positions are measured from the mid-plane, so
    the same function describes a slab of thickness l with an adiabatic face at x = 0 and a
    convective face at x = l.

    Parameters
    ----------
    x_m : array_like
        Positions from the mid-plane, -l <= x <= l [m].
    time_s : float
        Time since exposure, > 0 [s].
    half_thickness_m : float
        Half thickness l [m].
    conductivity_w_mk : float
        Thermal conductivity k [W/(m K)].
    diffusivity_m2_s : float
        Thermal diffusivity kappa [m2/s].
    film_w_m2k : float
        Surface film coefficient h [W/(m2 K)].
    initial_c : float
        Uniform initial temperature [degC].
    ambient_c : float
        Ambient temperature [degC].
    n_terms : int, optional
        Minimum number of series terms [-]; more are used when the Fourier number is small.

    Returns
    -------
    numpy.ndarray
        Temperature, same shape as ``x_m`` [degC].
    """
    theta = convective_theta(
        x_m, time_s, half_thickness_m, conductivity_w_mk, diffusivity_m2_s, film_w_m2k, n_terms
    )
    return ambient_c + (initial_c - ambient_c) * theta


def _points_and_halves(
    points_m: ArrayLike, half_sizes_m: Sequence[float]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    halves = np.atleast_1d(np.asarray(half_sizes_m, dtype=float))
    d = halves.size
    if d not in (1, 2, 3) or halves.ndim != 1:
        raise ValueError("half_sizes_m must have 1, 2 or 3 entries")
    pts = np.asarray(points_m, dtype=float)
    if d == 1 and pts.ndim == 1:
        pts = pts[:, None]
    if pts.ndim != 2 or pts.shape[1] != d:
        raise ValueError(f"points_m must have shape (n, {d})")
    return pts, halves


def box_convective_c(
    points_m: ArrayLike,
    time_s: float,
    half_sizes_m: Sequence[float],
    conductivity_w_mk: float,
    diffusivity_m2_s: float,
    film_w_m2k: float,
    initial_c: float,
    ambient_c: float,
    n_terms: int = 60,
) -> NDArray[np.float64]:
    """Temperature in a rectangle or box with the same film coefficient and ambient on every face.

    Source: product solution, C&J section 1.15 (and section 6.3 for the rectangular
    parallelepiped): theta(x, y, z, t) = theta_1(x, t) theta_2(y, t) theta_3(z, t), with each
    factor the plane-wall solution of C&J section 3.11 (:func:`convective_theta`) for the
    corresponding half size.

    Parameters
    ----------
    points_m : array_like
        Points, shape (n, d), coordinates measured from the centre [m]. For d = 1 a 1-D array
        of length n is accepted.
    time_s : float
        Time since exposure, > 0 [s].
    half_sizes_m : sequence of float
        Half sizes (l_1, ..., l_d) with d = 1, 2 or 3 [m].
    conductivity_w_mk : float
        Thermal conductivity k [W/(m K)].
    diffusivity_m2_s : float
        Thermal diffusivity kappa [m2/s].
    film_w_m2k : float
        Surface film coefficient h, same on all faces [W/(m2 K)].
    initial_c : float
        Uniform initial temperature [degC].
    ambient_c : float
        Ambient temperature [degC].
    n_terms : int, optional
        Minimum number of series terms per axis [-].

    Returns
    -------
    numpy.ndarray
        Temperature at each point, shape (n,) [degC].
    """
    pts, halves = _points_and_halves(points_m, half_sizes_m)
    theta = np.ones(pts.shape[0])
    for axis, half in enumerate(halves):
        theta *= convective_theta(
            pts[:, axis], time_s, half, conductivity_w_mk, diffusivity_m2_s, film_w_m2k, n_terms
        )
    return ambient_c + (initial_c - ambient_c) * theta


def box_fixed_faces_c(
    points_m: ArrayLike,
    time_s: float,
    half_sizes_m: Sequence[float],
    diffusivity_m2_s: float,
    initial_c: float,
    face_c: float,
    n_terms: int = 400,
) -> NDArray[np.float64]:
    """Temperature in a rectangle or box with every face held at ``face_c``.

    Source: product solution, C&J section 1.15 (and section 6.3, rectangular parallelepiped with
    surfaces at zero and constant initial temperature): theta = product over axes of the slab
    solution of C&J section 3.3 (:func:`fixed_faces_theta`).

    Parameters
    ----------
    points_m : array_like
        Points, shape (n, d), coordinates measured from the centre [m]. For d = 1 a 1-D array
        of length n is accepted.
    time_s : float
        Time since the faces were set, > 0 [s].
    half_sizes_m : sequence of float
        Half sizes (l_1, ..., l_d) with d = 1, 2 or 3 [m].
    diffusivity_m2_s : float
        Thermal diffusivity kappa [m2/s].
    initial_c : float
        Uniform initial temperature [degC].
    face_c : float
        Temperature imposed on all faces for t > 0 [degC].
    n_terms : int, optional
        Minimum number of series terms per axis [-].

    Returns
    -------
    numpy.ndarray
        Temperature at each point, shape (n,) [degC].
    """
    pts, halves = _points_and_halves(points_m, half_sizes_m)
    theta = np.ones(pts.shape[0])
    for axis, half in enumerate(halves):
        theta *= fixed_faces_theta(pts[:, axis], time_s, half, diffusivity_m2_s, n_terms)
    return face_c + (initial_c - face_c) * theta
