"""Linear solvers for the implicit step: a sparse direct factorisation, or preconditioned
conjugate gradients for large 2D/3D grids where fill-in makes factorising costly.

The step matrix (heat capacity plus conduction plus the derivative of the hydration source) is
symmetric and, for the step sizes the solver takes, positive definite, so conjugate gradients
apply (Saad, "Iterative Methods for Sparse Linear Systems", 2nd ed., 2003, section 6.7).
"""

from collections.abc import Callable

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from numpy.typing import NDArray

DIRECT_SOLVE_MAX_CELLS = 3000
"""Grids up to this many cells are factorised directly; larger ones use conjugate gradients."""
CG_RELATIVE_TOLERANCE = 1e-11
"""Relative residual at which conjugate gradients stop [-]."""


class LinearSolveError(RuntimeError):
    """The iterative solve did not converge (the step is then retried smaller)."""


Solve = Callable[[NDArray[np.float64]], NDArray[np.float64]]


def factorise(matrix: sp.csc_array) -> Solve:
    """Prepare ``matrix`` once and return a function solving ``matrix @ x = rhs`` for any rhs."""
    if matrix.shape[0] <= DIRECT_SOLVE_MAX_CELLS:
        return spla.splu(matrix).solve
    csr = sp.csr_array(matrix)
    preconditioner = sp.diags_array(1.0 / csr.diagonal())

    def solve(rhs: NDArray[np.float64]) -> NDArray[np.float64]:
        x, info = spla.cg(csr, rhs, rtol=CG_RELATIVE_TOLERANCE, atol=0.0, M=preconditioner,
                          maxiter=5000)
        if info != 0:
            raise LinearSolveError(f"conjugate gradients stopped with code {info}")
        return x

    return solve
