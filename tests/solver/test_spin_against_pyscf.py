"""<S^2> of our CI vectors measured by pyscf, and the lowest states of O2.

How our vectors map to pyscf's. A two-string vector without a target irrep is one block
``c[Ia, Ib]`` over ``strings(n, n_alpha) x strings(n, n_beta)``, each list in ascending integer
value, for the determinant ``A†(Ia) B†(Ib)|0>`` (alpha creators, then beta, each in ascending
orbital order; :mod:`integrity.solver.strings`). pyscf's ``direct_spin1`` vector ``ci[Ia, Ib]``
uses the same string order (``cistring.make_strings``, checked below) and the same product of
creators, so ``vector.reshape(na, nb)`` is pyscf's vector with no sign or index change. A vector
of one irrep is stored block by block (:mod:`integrity.solver.irrep_blocks`); ``to_full`` puts its
blocks back into the ``(na, nb)`` matrix. That the map is right is tested twice: pyscf's
``<S^2>`` and pyscf's energy of our vectors both agree with ours.

Reference-library values here come from ``pyscf.fci.spin_op.spin_square0`` and
``pyscf.fci.direct_spin1.energy`` applied to our vectors, and from ``pyscf.fci.direct_spin1.FCI``.
"""

from __future__ import annotations

import numpy as np
import pytest
from builders import PROPERTY_SETTINGS
from hypothesis import given
from hypothesis import strategies as st
from pyscf import fci
from pyscf.fci import cistring

from integrity.energies import solve
from integrity.producers import build
from integrity.solver import solve_arrays
from integrity.solver.irrep_blocks import block_layout
from integrity.solver.problems import two_string_problem
from integrity.solver.solve import residual_tolerance
from integrity.solver.spin import spin_square_matrix_two_string, two_s_of
from integrity.solver.strings import strings
from integrity.solver.targeting import lowest_states
from integrity.testing import random_hamiltonian

SPIN_AGREEMENT = 1e-8  # <S^2>, dimensionless: both sides exact to rounding for converged vectors
ENERGY_AGREEMENT = 1e-9  # hartree: the solves' energy accuracy


@pytest.fixture(scope="module", autouse=True)
def _pyscf_on_one_thread(one_openmp_thread):
    return one_openmp_thread


def native_states(h1, eri, n, n_alpha, n_beta, nroots, *, irreps=None, irrep=None):
    """Our lowest ``nroots`` states: (States, each vector as the (na, nb) matrix pyscf takes)."""
    problem = two_string_problem("restricted", h1, eri, n_alpha, n_beta, irreps=irreps, irrep=irrep, nroots=nroots)
    states = lowest_states(problem, nroots, tol=residual_tolerance(1e-10))
    layout = block_layout(n, n_alpha, n_beta, irreps, irrep)
    return states, [layout.to_full(v) for v in states.vectors.T]


def pyscf_spin_square(vector, n, n_alpha, n_beta) -> float:
    """pyscf's <S^2> of a normalised copy of ``vector`` (reference library)."""
    vector = vector / np.linalg.norm(vector)
    value, _ = fci.spin_op.spin_square0(vector, n, (n_alpha, n_beta))
    return float(value)


@pytest.mark.parametrize(("n", "k"), [(4, 2), (6, 3), (7, 2), (8, 5)])
def test_our_string_order_is_pyscfs(n, k):
    assert strings(n, k).tolist() == [int(s) for s in cistring.make_strings(range(n), k)]


SECTORS = [(6, 3, 3), (6, 2, 2), (5, 3, 2), (4, 3, 1)]  # each has roots of two spins among its lowest 8


@pytest.mark.slow
@pytest.mark.parametrize(("n", "n_alpha", "n_beta"), SECTORS)
def test_the_spin_of_every_root_is_pyscfs_spin_of_our_vector(n, n_alpha, n_beta):
    ham = random_hamiltonian("restricted", n, seed=3, alpha=n_alpha, beta=n_beta)
    h1, eri = np.asarray(ham.one_electron), np.asarray(ham.two_electron.array)
    nroots = 8
    states, vectors = native_states(h1, eri, n, n_alpha, n_beta, nroots)
    public = solve_arrays("restricted", h1, eri, n_alpha=n_alpha, n_beta=n_beta, nroots=nroots)
    assert np.allclose(public.energies, states.energies, atol=ENERGY_AGREEMENT, rtol=0)
    for root, ours, vector, energy in zip(public.roots, states.s_squared, vectors, states.energies, strict=True):
        # Source: pyscf.fci.spin_op.spin_square0 and pyscf.fci.direct_spin1.energy (reference library)
        theirs = pyscf_spin_square(vector, n, n_alpha, n_beta)
        assert abs(ours - theirs) <= SPIN_AGREEMENT
        assert abs(root.s_squared - theirs) <= SPIN_AGREEMENT
        assert abs(fci.direct_spin1.energy(h1, eri, vector, n, (n_alpha, n_beta)) - energy) <= ENERGY_AGREEMENT
    assert len({two_s_of(v) for v in states.s_squared}) >= 2  # the roots really are of mixed spin


@pytest.mark.parametrize(("n", "n_alpha", "n_beta"), SECTORS[:2])
def test_pyscfs_own_roots_have_our_energies_and_spins(n, n_alpha, n_beta):
    ham = random_hamiltonian("restricted", n, seed=3, alpha=n_alpha, beta=n_beta)
    h1, eri = np.asarray(ham.one_electron), np.asarray(ham.two_electron.array)
    ours = solve_arrays("restricted", h1, eri, n_alpha=n_alpha, n_beta=n_beta, nroots=6)
    solver = fci.direct_spin1.FCI()
    solver.conv_tol = 1e-12
    energies, vectors = solver.kernel(h1, eri, n, (n_alpha, n_beta), nroots=6)
    assert np.min(np.diff(energies)) > 1e-4  # no degenerate pair: each root's spin is defined
    # Source: pyscf.fci.direct_spin1.FCI and pyscf.fci.spin_op.spin_square0 (reference library)
    assert np.allclose(ours.energies, energies, atol=ENERGY_AGREEMENT, rtol=0)
    theirs = [pyscf_spin_square(v, n, n_alpha, n_beta) for v in vectors]
    assert np.allclose([r.s_squared for r in ours.roots], theirs, atol=SPIN_AGREEMENT, rtol=0)


@PROPERTY_SETTINGS
@given(
    n=st.integers(2, 6),
    data=st.data(),
    seed=st.integers(0, 2**32 - 1),
)
def test_our_spin_operator_is_pyscfs_on_any_vector(n, data, seed):
    """Mixtures of spins, not eigenvectors: <S^2> is no S(S+1), and the two must still agree."""
    n_alpha = data.draw(st.integers(0, n), label="n_alpha")
    n_beta = data.draw(st.integers(0, n), label="n_beta")
    rng = np.random.default_rng(seed)
    vectors = rng.standard_normal((3, len(strings(n, n_alpha)), len(strings(n, n_beta))))
    vectors /= np.linalg.norm(vectors, axis=(1, 2))[:, None, None]
    ours = spin_square_matrix_two_string(list(vectors), n, n_alpha, n_beta)
    for k, vector in enumerate(vectors):
        # Source: pyscf.fci.spin_op.spin_square0 (reference library)
        assert abs(ours[k, k] - pyscf_spin_square(vector, n, n_alpha, n_beta)) <= SPIN_AGREEMENT


# ---------------------------------------------------------------- O2
#
# Source: K. P. Huber and G. Herzberg, Molecular Spectra and Molecular Structure IV: Constants of
# Diatomic Molecules, Van Nostrand Reinhold, New York (1979), O2, X 3Sigma_g^- r_e = 1.2075 A
# (from memory).
O2_BOND = 1.2075  # angstrom
# The three states of the pi_g^2 configuration: X 3Sigma_g^- lowest, then a 1Delta_g (two
# components, degenerate), then b 1Sigma_g^+. Source: G. Herzberg, Molecular Spectra and Molecular
# Structure I: Spectra of Diatomic Molecules, 2nd ed., Van Nostrand, New York (1950), ch. VI, the
# states of O2 (from memory).
# In D2h (pyscf's subgroup of Dinfh): Sigma_g^- -> B1g, Delta_g -> Ag + B1g, Sigma_g^+ -> Ag
# (common practice).
DEGENERACY = 1e-8  # hartree: the pair is degenerate by symmetry; this bounds the solves' error


@pytest.fixture(scope="module")
def oxygen():
    """O2 in STO-3G, every orbital active (so the states do not depend on the ROHF orbitals)."""
    return build(f"O 0 0 0\nO 0 0 {O2_BOND}", "sto-3g", two_s=2, max_fci_determinants=0, date="2026-01-01")


def test_oxygen_lowest_ms0_states_are_the_triplet_then_the_degenerate_delta_pair_then_sigma_plus(oxygen):
    result = solve(oxygen, alpha=8, beta=8, roots=4)
    names = oxygen.provenance["irrep_names"].split()
    (triplet, delta_1, delta_2, sigma) = result.roots
    assert triplet.two_s == 2 and abs(triplet.s_squared - 2.0) <= SPIN_AGREEMENT
    assert names[triplet.irrep] == "B1g"
    assert [delta_1.two_s, delta_2.two_s, sigma.two_s] == [0, 0, 0]
    assert abs(delta_1.energy - delta_2.energy) <= DEGENERACY
    assert sorted(names[r.irrep] for r in (delta_1, delta_2)) == ["Ag", "B1g"]
    assert names[sigma.irrep] == "Ag"
    # well-separated levels: the order does not rest on the last digits
    assert delta_1.energy - triplet.energy > 1e-2 and sigma.energy - delta_2.energy > 1e-2


def test_oxygen_spins_are_pyscfs_spins_of_our_vectors_in_both_layouts(oxygen):
    h1, eri = np.asarray(oxygen.one_electron), np.asarray(oxygen.two_electron.array)
    n, irreps = oxygen.n, list(oxygen.orbitals.irreps)
    whole, whole_vectors = native_states(h1, eri, n, 8, 8, 4)
    b1g, b1g_vectors = native_states(h1, eri, n, 8, 8, 2, irreps=irreps, irrep=1)  # triplet, one Delta_g
    for states, vectors in ((whole, whole_vectors), (b1g, b1g_vectors)):
        for ours, vector in zip(states.s_squared, vectors, strict=True):
            # Source: pyscf.fci.spin_op.spin_square0 (reference library)
            assert abs(ours - pyscf_spin_square(vector, n, 8, 8)) <= SPIN_AGREEMENT
    assert [two_s_of(v) for v in whole.s_squared] == [2, 0, 0, 0]
    assert [two_s_of(v) for v in b1g.s_squared] == [2, 0]
