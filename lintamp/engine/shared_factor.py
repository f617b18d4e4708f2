"""One sparse factorisation per frequency for every variant of a small-signal network.

The impedance rules and the review sheet ask the same network many questions at one
frequency: a port with its signal source and node capacitors detached, an output with
its load detached, a Thevenin impedance with a net grounded, a gain with a net driven.
Each variant differs from the whole network ``Y`` in a few rows, ``Y' = Y + U V^T``
with ``U`` the columns of the identity at those ``k`` rows and ``V^T`` the change of
those rows.  With ``Y = LU`` factored once, the Sherman-Morrison-Woodbury identity
(Golub & Van Loan, *Matrix Computations*, 4th ed., sec. 2.1.4) gives

    Y'^-1 b = x - Z (I + V^T Z)^-1 V^T x,    x = Y^-1 b,  Z = Y^-1 U,

``k`` substitutions for ``Z`` and one dense ``k x k`` solve, instead of a factorisation.
Every solution is checked against ``Y'`` itself: a componentwise backward error above
:data:`BACKWARD_ERROR_MAX` (cancellation when the change is most of the network, a
variant that is singular) means the variant is factored on its own, so the numbers are
the ones a factorisation of ``Y'`` gives.
"""

from __future__ import annotations

import numpy as np

BACKWARD_ERROR_MAX = 1e-10  # componentwise |Y'x - b| / (|Y'||x| + |b|) (Oettli-Prager)
SMALL_CONDITION_MAX = 1e10  # of I + V^T Z; above, the update would lose too many digits
MAX_CHANGED_ROWS = 400  # past this a factorisation of the variant is cheaper
BASES_KEPT = 2  # (circuit, operating point, frequency) bases held; each is a full LU


class SharedBase:
    """The whole network at one frequency: compiled once, assembled once, factored once."""

    def __init__(self, circuit, op, compiled, rows, cols, vals, owner, device_owner, matrix, lu):
        self.circuit = circuit  # held so that the cache key (ids) stays valid
        self.op = op
        self.compiled = compiled
        self.rows, self.cols, self.vals, self.owner = rows, cols, vals, owner
        self.device_owner = device_owner
        self.matrix = matrix
        self.lu = lu
        self._abs = None
        self.notes: list[str] = []

    def abs_matrix(self):
        if self._abs is None:
            self._abs = abs(self.matrix)
        return self._abs


_BASES: dict[tuple, SharedBase] = {}


def base_for(key: tuple, build) -> SharedBase | None:
    """The cached base for ``key`` (ids of circuit and op, frequency), built by ``build()``
    when missing (None: the whole network cannot be factored, e.g. it is singular)."""
    if key in _BASES:
        base = _BASES.pop(key)
        _BASES[key] = base  # most recently used last
        return base
    base = build()  # None is kept too: a network that cannot serve is not tried again
    while len(_BASES) >= BASES_KEPT:
        _BASES.pop(next(iter(_BASES)))
    _BASES[key] = base
    return base


def clear() -> None:
    _BASES.clear()


class VariantFactor:
    """Solves ``Y' x = b`` for ``Y' = Y + delta`` from the base's LU (see the module text).

    ``delta`` is a sparse matrix (CSR) whose nonzero rows are the changed rows (None: no
    change).  ``Y'`` is never assembled unless ``refactor(singular=False)`` is called for
    the fallback factorisation (``singular=True``: ``Y'`` is known to be singular,
    ``det(Y') = det(Y) det(I + V^T Z)``).
    """

    def __init__(self, base: SharedBase, delta, refactor):
        self.base = base
        self.delta = delta
        self._refactor = refactor
        self._own = None
        self._z = None
        self.shape = base.matrix.shape
        changed = np.unique(delta.nonzero()[0]) if delta is not None else np.zeros(0, np.int64)
        self.changed_rows = changed
        if len(changed) == 0:
            return
        if len(changed) > MAX_CHANGED_ROWS:
            self._own = refactor()
            return
        size = self.shape[0]
        u = np.zeros((size, len(changed)), dtype=complex)
        u[changed, np.arange(len(changed))] = 1.0
        self._z = base.lu.solve(u)  # Y^-1 U
        self._vt = delta[changed, :]  # V^T, k x n sparse
        small = np.eye(len(changed), dtype=complex) + self._vt @ self._z
        if not np.all(np.isfinite(small)) or np.linalg.cond(small) > SMALL_CONDITION_MAX:
            self._own = refactor(singular=True)  # the variant is singular: shunted, with a note
            return
        try:
            self._small_lu = _dense_lu(small)
        except np.linalg.LinAlgError:  # the variant is singular where the base is not
            self._own = refactor(singular=True)

    def solve(self, rhs):
        if self._own is not None:
            return self._own.solve(rhs)
        rhs = np.asarray(rhs, dtype=complex)
        x = self.base.lu.solve(rhs)
        if self._z is not None:
            vtx = self._vt @ x
            x = x - self._z @ _dense_solve(self._small_lu, vtx)
        if not self._trusted(x, rhs):
            self._own = self._refactor()
            return self._own.solve(rhs)
        return x

    def _trusted(self, x, rhs) -> bool:
        """Componentwise backward error of ``x``; in the changed rows ``|Y| + |delta|`` bounds
        ``|Y'|`` (Y' itself is never assembled)."""
        if not np.all(np.isfinite(x)):
            return False
        product = self.base.matrix @ x
        scale = self.base.abs_matrix() @ np.abs(x) + np.abs(rhs)
        if self.delta is not None:
            product = product + self.delta @ x
            scale = scale + abs(self.delta) @ np.abs(x)
        residual = np.abs(product - rhs)
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(scale > 0, residual / scale, np.where(residual > 0, np.inf, 0.0))
        return bool(np.max(ratio, initial=0.0) <= BACKWARD_ERROR_MAX)


def _dense_lu(matrix):
    import scipy.linalg as la

    lu, piv = la.lu_factor(matrix, check_finite=True)
    if np.any(np.abs(np.diag(lu)) == 0):
        raise np.linalg.LinAlgError("singular")
    return lu, piv


def _dense_solve(factors, rhs):
    import scipy.linalg as la

    return la.lu_solve(factors, rhs)
