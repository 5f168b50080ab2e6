"""Sigma by irrep blocks against the unblocked sigma, the unblocked solver and pyscf's symmetry solver.

The unblocked reference is :mod:`integrity.solver.sigma_two_string` over the
whole ``c[Ia, Ib]`` matrix: projected on the determinants of the target irrep
it must equal the blocked sigma to 1e-10 for any integrals (the blocked
sigma is exactly ``P H P``), and its lowest eigenvalue in that space the
blocked solver's energy.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from locations import DAMAGED, GOOD
from pyscf import ao2mo, fci, gto, mcscf, scf, symm

from integrity.energies import solve as solve_hamiltonian
from integrity.energies.solve import solver_arrays, spatial_irreps
from integrity.errors import FieldError
from integrity.io import load
from integrity.solver import sigma_blocked as sigma_blocked_module
from integrity.solver import solve_arrays
from integrity.solver.davidson import davidson
from integrity.solver.integrals import require_arrays
from integrity.solver.irrep_blocks import block_layout
from integrity.solver.point_group import string_irreps
from integrity.solver.sigma_blocked import build_blocked, sigma_blocked
from integrity.solver.sigma_two_string import build_two_string, sigma_two_string
from integrity.solver.spin import spin_square_matrix_blocked, spin_square_matrix_two_string
from integrity.solver.strings import strings
from integrity.testing.arrays import random_restricted, random_unrestricted, restrict_to_irreps

TOL = 1e-10


def _arrays(kind, n, rng):
    if kind == "restricted":
        h, g = random_restricted(n, rng)
        return (h, h, g, g, g)
    h, g = random_unrestricted(n, rng)
    return (h[0], h[1], g[0], g[1], g[2])


@settings(max_examples=60, deadline=None)
@given(
    n=st.integers(2, 7),
    data=st.data(),
    kind=st.sampled_from(["restricted", "unrestricted"]),
    seed=st.integers(0, 2**32 - 1),
)
def test_blocked_sigma_is_the_projected_unblocked_sigma_for_random_irreps(n, data, kind, seed):
    n_alpha = data.draw(st.integers(0, n), label="n_alpha")
    n_beta = data.draw(st.integers(0, n), label="n_beta")
    rng = np.random.default_rng(seed)
    arrays = _arrays(kind, n, rng)
    irreps = rng.integers(0, 8, n)
    target = data.draw(st.integers(0, 7), label="irrep")
    labels = string_irreps(strings(n, n_alpha), irreps)[:, None] ^ string_irreps(strings(n, n_beta), irreps)[None, :]
    if not np.any(labels == target):
        return
    layout = block_layout(n, n_alpha, n_beta, irreps, target)
    assert layout.size == int(np.sum(labels == target))
    reference = build_two_string(*arrays, n_alpha, n_beta)
    op = build_blocked(*arrays, layout)
    c = rng.standard_normal(layout.size)
    want = layout.from_full(sigma_two_string(reference, layout.to_full(c)))
    assert np.allclose(sigma_blocked(op, c), want, atol=TOL, rtol=0)
    assert np.allclose(op.diagonal, layout.from_full(reference.diagonal), atol=TOL, rtol=0)


@pytest.mark.parametrize("seed", range(6))
def test_the_compressed_beta_gather_gives_the_same_sigma(seed, monkeypatch):
    # Small problems use the plain gather; force the per-string (compressed) one.
    monkeypatch.setattr(sigma_blocked_module, "COMPRESS_ROWS", 0)
    rng = np.random.default_rng(seed)
    n, n_alpha, n_beta = 7, 3, 2 + seed % 3
    arrays = _arrays("restricted" if seed % 2 else "unrestricted", n, rng)
    irreps = rng.integers(0, 4, n) if seed > 1 else None
    layout = block_layout(n, n_alpha, n_beta, irreps, None if irreps is None else 1)
    op = build_blocked(*arrays, layout)
    assert any(pair is not None for _, _, pair in op.beta_gather.values())
    c = rng.standard_normal(layout.size)
    want = layout.from_full(sigma_two_string(build_two_string(*arrays, n_alpha, n_beta), layout.to_full(c)))
    assert np.allclose(sigma_blocked(op, c), want, atol=TOL, rtol=0)


@settings(max_examples=25, deadline=None)
@given(n=st.integers(2, 6), seed=st.integers(0, 2**32 - 1), target=st.integers(0, 7))
def test_blocked_spin_square_equals_the_whole_matrix_one(n, seed, target):
    rng = np.random.default_rng(seed)
    irreps = rng.integers(0, 8, n)
    n_alpha, n_beta = int(rng.integers(0, n + 1)), int(rng.integers(0, n + 1))
    try:
        layout = block_layout(n, n_alpha, n_beta, irreps, target)
    except FieldError:
        return  # no determinant of this irrep
    vectors = rng.standard_normal((2, layout.size))
    want = spin_square_matrix_two_string([layout.to_full(v) for v in vectors], n, n_alpha, n_beta)
    assert np.allclose(spin_square_matrix_blocked(vectors, layout), want, atol=TOL, rtol=0)


def _unblocked_lowest(arrays, n_alpha, n_beta, irreps, irrep, nroots=1):
    """Lowest eigenvalues in the irrep's space with the unblocked sigma (the solver before blocks)."""
    op = build_two_string(*arrays, n_alpha, n_beta)
    layout = block_layout(len(irreps), n_alpha, n_beta, irreps, irrep)

    def matvec(v):
        return layout.from_full(sigma_two_string(op, layout.to_full(v)))

    result = davidson(matvec, layout.from_full(op.diagonal), nroots, tol=1e-8, explicit_limit=0)
    assert result.converged.all()
    return result.energies


@pytest.mark.slow
@pytest.mark.parametrize("irrep", range(4))
@pytest.mark.parametrize("kind", ["restricted", "unrestricted"])
def test_blocked_energies_equal_the_unblocked_solver_on_random_symmetric_hamiltonians(kind, irrep):
    irreps = [0, 1, 2, 3, 0, 1, 3]
    rng = np.random.default_rng(10 + irrep)
    if kind == "restricted":
        h, g = restrict_to_irreps(*random_restricted(7, rng), irreps)
        arrays, h1, eri = (h, h, g, g, g), h, g
    else:
        h, g = random_unrestricted(7, rng)
        pieces = [restrict_to_irreps(h[i], g[j], irreps) for i, j in ((0, 0), (0, 1), (1, 2))]
        h1 = np.array([pieces[0][0], pieces[2][0]])
        eri = np.array([pieces[0][1], pieces[1][1], pieces[2][1]])
        arrays = (h1[0], h1[1], eri[0], eri[1], eri[2])
    want = _unblocked_lowest(arrays, 3, 3, irreps, irrep, nroots=2)
    got = solve_arrays(kind, h1, eri, n_alpha=3, n_beta=3, irreps=irreps, irrep=irrep, nroots=2, tol=1e-12)
    assert np.allclose(got.energies, want, atol=TOL, rtol=0)
    assert all(root.irrep == irrep for root in got.roots)


FIXTURES_WITH_IRREPS = [
    path
    for path in sorted([*GOOD.glob("*.h5"), *GOOD.glob("*.json"), *DAMAGED.glob("*.h5"), *DAMAGED.glob("*.json")])
    if "truncated" not in path.name
]


@pytest.mark.slow
@pytest.mark.parametrize("path", FIXTURES_WITH_IRREPS, ids=lambda p: p.name)
def test_every_fixture_with_irreps_gives_the_unblocked_energy_in_each_irrep(path):
    ham = load(path)
    if ham.orbitals.irreps is None or ham.basis == "spin-orbital":
        pytest.skip("no irreps, or spin-orbital (covered below)")
    h1, eri, _ = solver_arrays(ham, need_irreps=False)
    try:
        require_arrays(ham.basis, h1, eri)
    except FieldError as err:
        pytest.skip(f"the solver refuses this file: {err}")
    irreps = spatial_irreps(ham)
    n_alpha, n_beta = ham.electrons.alpha, ham.electrons.beta
    arrays = (h1, h1, eri, eri, eri) if ham.basis == "restricted" else (h1[0], h1[1], eri[0], eri[1], eri[2])
    present = string_irreps(strings(ham.n, n_alpha), irreps)[:, None] ^ string_irreps(strings(ham.n, n_beta), irreps)
    for irrep in np.unique(present):
        want = _unblocked_lowest(arrays, n_alpha, n_beta, irreps, irrep)
        got = solve_hamiltonian(ham, irrep=int(irrep), tol=1e-12)
        assert abs(got.roots[0].energy - ham.core_energy - want[0]) < TOL, (path.name, int(irrep))
        assert got.roots[0].irrep == irrep


@pytest.mark.parametrize(
    ("name", "two_strings"),
    [("lih_sto3g_spin_orbital_interleaved.json", True), ("water_sto3g_antisymmetrized.h5", False)],
)
def test_spin_orbital_fixtures_with_irreps_keep_their_energy(name, two_strings):
    # Separate alpha and beta blocks go through the blocked two-string solver; the antisymmetrized
    # file, read as plain integrals, has alpha-beta mixed pairs and stays with the spin-orbital one.
    ham = load(GOOD / name)
    reference = next(r for r in ham.references if r.method == "fci")
    result = solve_hamiltonian(ham, irrep=reference.irrep, tol=1e-12)
    assert any("two strings" in note for note in result.notes) == two_strings
    assert abs(result.roots[0].energy - reference.energy) < 1e-8
    whole = solve_hamiltonian(ham, tol=1e-12)
    assert abs(whole.roots[0].energy - result.roots[0].energy) < TOL


def _n2_symmetric(n_active):
    mol = gto.M(atom="N 0 0 0; N 0 0 1.098", basis="6-31g", symmetry="d2h", verbose=0)
    mf = scf.RHF(mol).run()
    cas = mcscf.CASCI(mf, n_active, 6)
    h1, ecore = cas.get_h1eff()
    eri = ao2mo.restore(1, cas.get_h2eff(), n_active)
    orbsym = symm.label_orb_symm(mol, mol.irrep_id, mol.symm_orb, mf.mo_coeff)
    return h1, eri, ecore, np.asarray(orbsym[cas.ncore : cas.ncore + n_active])


@pytest.mark.slow
def test_each_irrep_matches_pyscf_direct_spin1_symm(one_openmp_thread):
    h1, eri, ecore, orbsym = _n2_symmetric(8)
    for irrep in range(8):
        solver = fci.direct_spin1_symm.FCI()
        solver.conv_tol = 1e-12
        want, _ = solver.kernel(h1, eri, 8, (3, 3), ecore=ecore, orbsym=orbsym, wfnsym=irrep)
        got = solve_arrays(
            "restricted", h1, eri, ecore, n_alpha=3, n_beta=3, irreps=list(orbsym), irrep=irrep, tol=1e-12
        )
        assert abs(got.roots[0].energy - want) < 1e-9, irrep
