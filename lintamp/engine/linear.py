"""Linear solves for the engine: dense LAPACK below a size, SuperLU above it.

A cell of a few hundred unknowns solves faster as a dense matrix than as a sparse
one, and a dense solve needs only numpy: a pre-commit run on a small deck does not
pay for importing scipy (the largest part of its start-up).  Above
:data:`DENSE_LIMIT` unknowns the matrix is sparse and SuperLU factors it.

Both kinds of factor raise ``RuntimeError`` on an exactly singular matrix, as
SuperLU does, so callers handle one exception.
"""

from __future__ import annotations

import numpy as np

DENSE_LIMIT = 250  # unknowns; a dense LU of 250 costs ~5 Mflop


def assemble(rows, cols, vals, size: int, dtype=float):
    """The matrix summing ``vals`` at ``(rows, cols)``: dense when small, CSC when large."""
    if size <= DENSE_LIMIT:
        matrix = np.zeros((size, size), dtype=dtype)
        np.add.at(matrix, (rows, cols), vals)
        return matrix
    import scipy.sparse as sp

    return sp.csc_matrix((vals, (rows, cols)), shape=(size, size), dtype=dtype)


def add_to_diagonal(matrix, count: int, value):
    """``matrix`` plus ``value`` on the first ``count`` diagonal entries (a new matrix)."""
    if isinstance(matrix, np.ndarray):
        out = matrix.copy()
        idx = np.arange(count)
        out[idx, idx] += value
        return out
    import scipy.sparse as sp

    size = matrix.shape[0]
    diag = np.zeros(size, dtype=matrix.dtype)
    diag[:count] = value
    return (matrix + sp.diags(diag, format="csc")).tocsc()


def to_sparse(matrix):
    """The matrix as scipy CSC (for callers that need sparse operations)."""
    import scipy.sparse as sp

    return sp.csc_matrix(matrix)


def to_dense(matrix) -> np.ndarray:
    return matrix if isinstance(matrix, np.ndarray) else matrix.toarray()


class DenseFactor:
    """A dense matrix ready to solve: the first solve is one LAPACK ``gesv``; a matrix
    asked for more than one solution is inverted once (``gesv`` on the identity) and
    later solutions are one matrix product each."""

    def __init__(self, matrix: np.ndarray):
        self._matrix = matrix
        self._inverse: np.ndarray | None = None
        self._solves = 0
        self.shape = matrix.shape
        # non-finite entries (an overflowed device) give a non-finite solution, as
        # SuperLU's do; the Newton loop then tries its next strategy

    def _gesv(self, rhs):
        try:
            return np.linalg.solve(self._matrix, rhs)
        except np.linalg.LinAlgError as exc:
            raise RuntimeError("Factor is exactly singular") from exc

    def check(self) -> "DenseFactor":
        """Raise ``RuntimeError`` now if the matrix is singular (SuperLU raises when factoring)."""
        if self._inverse is None and self.shape[0]:
            self._inverse = self._gesv(np.eye(self.shape[0], dtype=self._matrix.dtype))
        return self

    def solve(self, rhs):
        rhs = np.asarray(rhs)
        self._solves += 1
        if self._inverse is None and self._solves == 1:
            return self._gesv(rhs)
        self.check()
        return self._inverse @ rhs


def factor(matrix, permc_spec: str = "COLAMD", eager: bool = False):
    """A factor of ``matrix`` with ``.solve(rhs)``; ``eager`` checks singularity now."""
    if isinstance(matrix, np.ndarray):
        dense = DenseFactor(matrix)
        return dense.check() if eager else dense
    from scipy.sparse.linalg import splu

    return splu(matrix, permc_spec=permc_spec)
