"""Many driving-point impedances from one reordered LU (the diagonal of the inverse).

References: LAPACK's dense inverse through numpy (``numpy.linalg.inv``) for the
matrix routine, ngspice-39 AC analysis for the impedances of a deck, and
one forward/back substitution per net (``ImpedanceSolver.z``, itself checked
against ngspice in test_engine_ngspice.py) for every other net.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp

import ngspice_harness as ng
from engine_builder import flat_from_text
from lintamp.engine.inverse_diagonal import inverse_diagonal
from lintamp.engine.operating_point import solve_operating_point
from lintamp.engine.small_signal import ImpedanceSolver

NCH = ".model nch nmos level=1 vto=0.5 kp=200u gamma=0.5 phi=0.7 lambda=0.1 tox=9n cgso=2e-10 cgdo=2e-10\n"


def random_network_matrix(n: int, seed: int, branches: int = 0) -> sp.csc_matrix:
    """A nodal admittance matrix of a random RC mesh with one-way gm terms, plus
    ``branches`` voltage sources to ground (MNA branch rows with a zero diagonal)."""
    rng = np.random.default_rng(seed)
    rows, cols, vals = [], [], []
    for _ in range(3 * n):
        a, b = rng.integers(0, n, 2)
        if a == b:
            continue
        y = 10 ** rng.uniform(-5, -3) + 1j * 10 ** rng.uniform(-7, -5)
        rows += [a, b, a, b]
        cols += [a, b, b, a]
        vals += [y, y, -y, -y]
    for k in range(n):  # a path to ground everywhere, as every extracted net has
        rows.append(k), cols.append(k), vals.append(1e-6 + 1e-7j)
    for _ in range(n // 20):  # transconductances: current into d set by v(g)
        d, g = rng.integers(0, n, 2)
        rows.append(d), cols.append(g), vals.append(1e-3)
    size = n + branches
    for k, node in enumerate(rng.choice(n, branches, replace=False)):  # distinct: no sources in parallel
        rows += [node, n + k]
        cols += [n + k, node]
        vals += [1.0, 1.0]
    return sp.csc_matrix((vals, (rows, cols)), shape=(size, size), dtype=complex)


@pytest.mark.parametrize("seed,branches", [(1, 0), (2, 0), (3, 4), (4, 12)])
def test_inverse_diagonal_matches_the_dense_inverse(seed, branches):
    matrix = random_network_matrix(600, seed, branches)
    reference = np.diagonal(np.linalg.inv(matrix.toarray()))  # LAPACK getrf/getri via numpy
    wanted = np.random.default_rng(seed + 100).choice(600, 80, replace=False)
    # branch unknowns too: their zero diagonal makes SuperLU pivot inside the trailing block
    wanted = np.concatenate([wanted, np.arange(600, 600 + branches)])
    values, found = inverse_diagonal(matrix, wanted)
    assert found.sum() >= 70 + branches  # nearly all come from the Schur complement
    np.testing.assert_allclose(values[found], reference[wanted][found], rtol=1e-9)


def test_inverse_diagonal_of_nothing():
    values, found = inverse_diagonal(random_network_matrix(50, 1), np.array([], dtype=int))
    assert values.shape == (0,) and found.shape == (0,)


def amplifier_block(chains: int, stages: int, ladder: int) -> str:
    """Deck text, our own scenario: chains of AC-coupled NMOS common-source stages,
    each drain driving an RC ladder, neighbouring ladders coupled by 2 fF."""
    lines = ["amplifier block", NCH.strip(), "vdd vdd 0 3", "vb vb 0 0.8"]
    for c in range(chains):
        previous = None
        for s in range(stages):
            tag = f"{c}_{s}"
            lines += [f"rb{tag} vb g{tag} 100k", f"rd{tag} vdd d{tag} 10k",
                      f"m{tag} d{tag} g{tag} 0 0 nch w=10u l=1u"]
            if previous:
                lines.append(f"cc{tag} {previous} g{tag} 100f")
            node = f"d{tag}"
            for k in range(ladder):
                lines += [f"r{tag}_{k} {node} n{tag}_{k} 1k", f"c{tag}_{k} n{tag}_{k} 0 10f"]
                node = f"n{tag}_{k}"
            previous = node
            if c:
                lines.append(f"cx{tag} n{tag}_{ladder // 2} n{c - 1}_{s}_{ladder // 2} 2f")
    return "\n".join(lines) + "\n.end\n"


def probe_nets(circuit, count: int, seed: int) -> list[str]:
    names = [n for n in circuit.nets if n not in ("0", "vdd", "vb")]
    picked = np.random.default_rng(seed).choice(len(names), count, replace=False)
    return [names[i] for i in picked]


def test_many_impedances_match_ngspice_and_single_solves():
    deck = amplifier_block(chains=6, stages=3, ladder=20)
    circuit = flat_from_text(deck, "block.cir")
    op = solve_operating_point(circuit)
    solver = ImpedanceSolver(circuit, op, 10e6)
    assert solver.compiled.size > 250  # sparse, so the reordered LU is used
    probes = probe_nets(circuit, 60, seed=5) + ["vdd", "0", "d0_0"]  # AC ground, ground, a repeat
    probes.append(probes[0])
    z = solver.z_many(probes)
    for node, value in zip(probes, z):
        assert value == pytest.approx(solver.z(node), rel=1e-9, abs=1e-9), node
    for node in probes[:3]:
        (z_ref,) = ng.impedance(deck, node, [10e6])  # ngspice-39 AC analysis
        assert abs(z[probes.index(node)] - z_ref) <= 0.01 * abs(z_ref), node


def test_a_long_gain_chain_still_matches_single_solves():
    # forty cascaded gain stages: transimpedances from the first nets to the last
    # ones are enormous beside the driving-point values
    deck = amplifier_block(chains=1, stages=40, ladder=8)
    circuit = flat_from_text(deck, "chain.cir")
    solver = ImpedanceSolver(circuit, solve_operating_point(circuit), 10e6)
    probes = probe_nets(circuit, 40, seed=9)
    z = solver.z_many(probes)
    np.testing.assert_allclose(z, [solver.z(node) for node in probes], rtol=1e-9)


def test_an_overflowing_gain_chain_is_refused_not_guessed():
    # a one-way chain of transconductance stages, gain 1e5 per stage: the matrix is
    # lower triangular, so inv(A)[k, k] = 1 / A[k, k] exactly (a triangular
    # matrix's inverse has the reciprocal diagonal: Golub & Van Loan 3.1), while the
    # transimpedances overflow after 62 stages
    n = 300
    g_s = 1e-2 + 1e-3j
    rows = list(range(n)) + list(range(1, n))
    cols = list(range(n)) + list(range(n - 1))
    vals = [g_s] * n + [-1e3] * (n - 1)
    matrix = sp.csc_matrix((vals, (rows, cols)), shape=(n, n), dtype=complex)
    wanted = np.arange(0, n, 3)
    values, found = inverse_diagonal(matrix, wanted)
    assert not found.all()
    np.testing.assert_allclose(values[found], 1 / g_s, rtol=1e-9)


def test_an_ill_conditioned_pair_is_refused_and_the_rest_kept():
    # a pair coupled almost exactly (det = 1 - (1 - d)^2 ~ 2d): its inverse diagonal
    # 1/det carries a relative error ~ eps/det, over ACCURACY; the isolated unknowns
    # beside it have inv = 1/2 exactly (block-diagonal inverse, from memory)
    d = 1e-10
    n = 40
    dense = np.diag(np.full(n, 2.0 + 0j))
    dense[10:12, 10:12] = [[1.0, 1.0 - d], [1.0 - d, 1.0]]
    values, found = inverse_diagonal(sp.csc_matrix(dense), np.arange(n))
    assert not found[10] and not found[11]
    assert found.sum() == n - 2
    np.testing.assert_allclose(values[found], 0.5, rtol=1e-12)
