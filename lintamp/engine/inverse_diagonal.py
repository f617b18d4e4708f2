"""Selected diagonal entries of a sparse matrix's inverse, from one reordered LU.

With the wanted unknowns ``T`` ordered last, ``(B^-1)_TT = S^-1`` for the Schur
complement ``S = B_TT - B_TI B_II^-1 B_IT`` of the interior ``I`` (Golub & Van
Loan, *Matrix Computations*, 4th ed., sec. 3.2.11).  The sparse LU of the
reordered matrix holds ``B_TI B_II^-1 B_IT = L_TI U_IT``, so the diagonal of
``B^-1`` at ``T`` costs one sparse LU, one sparse product and one dense
``m x m`` inverse, not ``m`` forward/back substitutions over the whole factor.
For the driving-point impedance of 1000 nets of a 100k-node network that is
0.6 s instead of 12 s here.

- The interior keeps a fill-reducing order: minimum degree on the pattern of
  ``|B| + |B|^T`` (Davis, *Direct Methods for Sparse Linear Systems*, SIAM 2006,
  ch. 7), which SuperLU computes on a diagonally dominant matrix of that
  pattern (scipy exposes the ordering only through a factorisation).
- Interior pivots stay on the diagonal unless it is zero, which suits nodal
  admittance matrices; SuperLU sees a huge diagonal in place of ``B_TT`` so that
  it never pivots there (those rows are not used).
- ``S^-1`` comes from LAPACK's LU with partial pivoting, and each value carries a
  componentwise error bound (Higham, *Accuracy and Stability of Numerical
  Algorithms*, 2nd ed., sec. 7.2).  A long chain of gain stages between two
  wanted nets makes ``S`` ill-conditioned; a value whose bound is too large is
  reported as not found, and the caller solves that net the ordinary way.
"""

from __future__ import annotations

import warnings

import numpy as np

# SuperLU diag_pivot_thresh: keep any diagonal above 1e-6 of its column.  Partial
# pivoting in this order reported "exactly singular" on nonsingular 100k-node
# networks; the growth check and the error bound guard stability instead.
DIAGONAL_PREFERENCE = 1e-6
STAND_IN = 1e150  # the trailing diagonal SuperLU factors in place of B_TT
ACCURACY = 1e-9  # largest estimated relative error of a value returned as found
MAX_GROWTH = 1e8  # largest |L| entry of the interior above this: too much growth to trust S


def _interior_order(matrix, interior: np.ndarray) -> np.ndarray:
    """Minimum-degree order of the interior block (as positions into ``interior``)."""
    import scipy.sparse as sp
    from scipy.sparse.linalg import splu

    block = matrix[interior][:, interior]
    pattern = abs(block)
    pattern = (pattern + pattern.T).tocsc()
    pattern.data[:] = 1.0
    dominant = pattern + sp.diags(np.asarray(pattern.sum(axis=1)).ravel() + 1.0, format="csc")
    order = splu(dominant.tocsc(), permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                 options={"SymmetricMode": True})
    return order.perm_c


def inverse_diagonal(matrix, wanted) -> tuple[np.ndarray, np.ndarray]:
    """``(values, found)``: ``inv(matrix)[k, k]`` for each ``k`` in ``wanted``.

    Parameters
    ----------
    matrix : square scipy sparse matrix (complex or real), nonsingular.
    wanted : distinct unknown indices.

    Returns
    -------
    values : the diagonal entries (0 where not found).
    found : False where the error bound exceeds ``ACCURACY`` relative to the
        value, and everywhere when a pivot crossed the blocks or the interior
        factor's entries exceed ``MAX_GROWTH``; the caller solves those one by one.

    Raises ``RuntimeError`` when SuperLU finds the reordered interior exactly singular.

    Examples
    --------
    >>> import numpy as np, scipy.sparse as sp
    >>> a = sp.csc_matrix(np.array([[2.0, -1, 0], [-1, 2, -1], [0, -1, 2]]))
    >>> values, found = inverse_diagonal(a, np.array([0, 1]))
    >>> np.round(values, 4).tolist(), found.tolist()
    ([0.75, 1.0], [True, True])

    Notes
    -----
    One minimum-degree ordering, one sparse LU of the reordered matrix, one
    sparse product, and O(m^3) dense work for ``m = len(wanted)`` (plus the zero-
    diagonal branch rows of sources on wanted nets); memory O(nnz(L+U) + m^2).
    """
    import scipy.sparse as sp
    from scipy.linalg import LinAlgWarning, lu_factor, lu_solve
    from scipy.sparse.linalg import splu

    wanted = np.asarray(wanted, dtype=np.int64)
    matrix = sp.csc_matrix(matrix)
    n = matrix.shape[0]
    values = np.zeros(len(wanted), dtype=np.result_type(matrix.dtype, np.float64))
    found = np.zeros(len(wanted), dtype=bool)
    if len(wanted) == 0:
        return values, found
    in_tail = np.zeros(n, dtype=bool)
    in_tail[wanted] = True
    # the branch row of a source on a wanted net couples only to that net: left
    # inside, it would make the interior block singular
    zero_diagonal = matrix.diagonal() == 0
    touching = (abs(matrix[:, wanted]).sum(axis=1).A1 != 0) | (abs(matrix[wanted]).sum(axis=0).A1 != 0)
    extra = np.flatnonzero(zero_diagonal & touching & ~in_tail)
    in_tail[extra] = True
    tail = np.concatenate([wanted, extra])
    interior = np.flatnonzero(~in_tail)
    if len(interior):
        interior = interior[_interior_order(matrix, interior)]
    order = np.concatenate([interior, tail])
    reordered = matrix[order][:, order].tocsc()
    first = len(interior)
    # SuperLU factors the trailing block too, and only L_TI and U_IT are used.  A
    # trailing block of one huge diagonal keeps that part from pivoting (a gain
    # chain can make partial pivoting underflow to "exactly singular") and leaves
    # L_TI and U_IT exactly as they are.
    entries = reordered.tocoo()
    keep = (entries.row < first) | (entries.col < first)
    diagonal_tail = np.arange(first, n)
    standin = sp.csc_matrix(
        (np.r_[entries.data[keep], np.full(len(tail), STAND_IN)],
         (np.r_[entries.row[keep], diagonal_tail], np.r_[entries.col[keep], diagonal_tail])),
        shape=(n, n))
    lu = splu(standin, permc_spec="NATURAL", diag_pivot_thresh=DIAGONAL_PREFERENCE,
              options={"SymmetricMode": True})
    if not (np.array_equal(lu.perm_c, np.arange(n)) and np.array_equal(lu.perm_r[first:], np.arange(first, n))):
        return values, found  # a pivot crossed the blocks: the product below would be wrong
    lower, upper = lu.L.tocsc(), lu.U.tocsc()
    if lower.nnz and np.max(np.abs(lower[:, :first].data), initial=0.0) > MAX_GROWTH:
        return values, found
    # Pr B = L U with the trailing rows in place: L_TI U_II = B_TI and
    # L_II U_IT = P_I B_IT, so the Schur complement of the interior is
    # S = B_TT - B_TI B_II^-1 B_IT = B_TT - L_TI U_IT.
    coupling = (lower[first:, :first] @ upper[:first, first:]).toarray()
    schur = reordered[first:, first:].toarray() - coupling
    m = len(wanted)
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", LinAlgWarning)  # a singular S is refused below, not printed
        inverse = lu_solve(lu_factor(schur, check_finite=False), np.eye(len(tail), dtype=schur.dtype),
                           check_finite=False)
        diagonal = np.diagonal(inverse)[:m].copy()
        # componentwise (Skeel) bound: a backward-stable solve leaves a residual of
        # about eps |S| |x_k|, so x_kk is off by at most eps (|S^-1| |S| |S^-1|)_kk.
        # An entry far below the rest of its row and column (a gain chain between
        # two wanted nets) is only trusted while that bound stays small beside it.
        magnitude = np.abs(inverse)
        spread = np.abs(schur) @ magnitude[:, :m]
        bound = (np.finfo(float).eps * np.einsum("ki,ik->k", magnitude[:m], spread)
                 / np.abs(diagonal))
    found[:] = np.isfinite(diagonal) & np.isfinite(bound) & (bound <= ACCURACY)
    values[found] = diagonal[found]
    return values, found
