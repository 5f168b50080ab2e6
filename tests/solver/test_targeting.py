"""Spin (2S) and irrep targets, checked against full diagonalisation and pyscf."""

from __future__ import annotations

import numpy as np
import pytest
from pyscf import ao2mo, gto, mcscf, scf, symm

from integrity.errors import FieldError
from integrity.solver import slater_condon_solve, solve_arrays
from integrity.solver.integrals import spin_orbital_integrals
from integrity.solver.spin import two_s_of
from integrity.testing.arrays import (
    hund_pair,
    random_restricted,
    random_unrestricted,
    restrict_to_irreps,
)

TOL = 1e-9


@pytest.mark.slow
@pytest.mark.parametrize("engine", ["native", "pyscf"])
def test_a_singlet_target_skips_the_lower_triplet_of_a_hund_pair(engine):
    # Levels derived by hand (see test_models): triplet v - k = 0.45 lies lowest at S_z = 0;
    # the singlets are v + k = 0.75, u - k = 0.85 and u + k = 1.15.
    h, eri = hund_pair()
    singlets = solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1, two_s=0, nroots=3, engine=engine)
    assert np.allclose(singlets.energies, [0.75, 0.85, 1.15], atol=1e-12)
    assert all(abs(r.s_squared) < 1e-8 and r.two_s == 0 for r in singlets.roots)
    second = solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1, two_s=0, root=1, engine=engine)
    assert abs(second.roots[0].energy - 0.85) < 1e-12
    triplet = solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1, two_s=2, engine=engine)
    assert abs(triplet.roots[0].energy - 0.45) < 1e-12
    assert abs(triplet.roots[0].s_squared - 2.0) < 1e-8


def _oxygen_cas():
    mol = gto.M(atom="O 0 0 0; O 0 0 1.21", basis="sto-3g", spin=2, symmetry="d2h", verbose=0)
    mf = scf.ROHF(mol).run()
    cas = mcscf.CASCI(mf, 6, 8)
    h1, ecore = cas.get_h1eff()
    eri = ao2mo.restore(1, cas.get_h2eff(), 6)
    ncore = cas.ncore
    orbsym = symm.label_orb_symm(mol, mol.irrep_id, mol.symm_orb, mf.mo_coeff)
    return h1, eri, ecore, np.asarray(orbsym[ncore : ncore + 6])


@pytest.fixture(scope="module")
def oxygen():
    return _oxygen_cas()


@pytest.mark.slow
def test_oxygen_lowest_sz0_state_is_the_triplet_and_the_singlet_target_finds_delta_g(oxygen):
    h1, eri, ecore, _ = oxygen
    lowest = solve_arrays("restricted", h1, eri, ecore, n_alpha=4, n_beta=4)
    assert lowest.roots[0].two_s == 2
    singlets = solve_arrays("restricted", h1, eri, ecore, n_alpha=4, n_beta=4, two_s=0, nroots=3)
    dense = slater_condon_solve("restricted", h1, eri, ecore, n_alpha=4, n_beta=4)
    want = dense.energies[np.abs(dense.s_squared) < 1e-6][:3]
    assert np.allclose(singlets.energies, want, atol=TOL)
    # 1Delta_g is doubly degenerate; both components must come out as pure singlets.
    assert abs(singlets.energies[0] - singlets.energies[1]) < 1e-8
    assert all(abs(r.s_squared) < 1e-8 for r in singlets.roots)
    reference = solve_arrays("restricted", h1, eri, ecore, n_alpha=4, n_beta=4, two_s=0, nroots=3, engine="pyscf")
    assert np.allclose(reference.energies, want, atol=TOL)


def test_reported_spins_are_exact_multiplets_for_every_root(oxygen):
    h1, eri, ecore, _ = oxygen
    result = solve_arrays("restricted", h1, eri, ecore, n_alpha=4, n_beta=4, nroots=8, tol=1e-12)
    for root in result.roots:
        s = root.two_s / 2
        assert abs(root.s_squared - s * (s + 1)) < 1e-8


@pytest.mark.slow
@pytest.mark.parametrize("two_s", [0, 2, 4])
def test_spin_targets_on_random_hamiltonians_match_selection_from_full_diagonalisation(two_s):
    h, eri = random_restricted(5, np.random.default_rng(31 + two_s))
    dense = slater_condon_solve("restricted", h, eri, n_alpha=3, n_beta=3)
    spins = np.array([two_s_of(v) for v in dense.s_squared])
    want = dense.energies[spins == two_s][:2]
    native = solve_arrays("restricted", h, eri, n_alpha=3, n_beta=3, two_s=two_s, nroots=2)
    assert np.allclose(native.energies, want, atol=TOL)
    assert [r.two_s for r in native.roots] == [two_s, two_s]


@pytest.mark.slow
@pytest.mark.parametrize("layout", ["blocked", "interleaved"])
def test_spin_targets_work_for_spin_orbital_input_without_the_flip_symmetry(layout):
    h, eri = random_restricted(4, np.random.default_rng(8))
    hs, gs = spin_orbital_integrals("restricted", h, eri, layout)
    for two_s, n_electrons in ((0, 4), (2, 4), (1, 3)):
        native = solve_arrays("spin-orbital", hs, gs, n_electrons=n_electrons, two_s=two_s, spin_layout=layout)
        restricted = solve_arrays("restricted", h, eri, n_electrons=n_electrons, two_s=two_s)
        assert abs(native.roots[0].energy - restricted.roots[0].energy) < TOL
        assert native.roots[0].two_s == two_s


def test_unrestricted_input_ignores_two_s_and_says_so():
    h1, eri = random_unrestricted(4, np.random.default_rng(2))
    result = solve_arrays("unrestricted", h1, eri, n_alpha=2, n_beta=2, two_s=0)
    plain = solve_arrays("unrestricted", h1, eri, n_alpha=2, n_beta=2)
    assert result.energies == pytest.approx(plain.energies, abs=1e-12)
    assert result.roots[0].s_squared is None and result.roots[0].two_s is None
    assert any("two_s not checked" in note for note in result.notes)
    assert result.two_s_checked is False and plain.two_s_checked is None
    h, eri = random_restricted(4, np.random.default_rng(2))
    assert solve_arrays("restricted", h, eri, n_alpha=2, n_beta=2, two_s=0).two_s_checked


def test_a_spin_that_the_sector_cannot_hold_is_refused():
    h, eri = random_restricted(3, np.random.default_rng(0))
    with pytest.raises(FieldError, match="2S = 1"):
        solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1, two_s=1)
    with pytest.raises(FieldError, match="two_s"):
        solve_arrays("restricted", h, eri, n_alpha=3, n_beta=0, two_s=1)
    with pytest.raises(FieldError, match="found"):
        solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1, two_s=2, nroots=4)


def _symmetric_random(n, irreps, seed):
    return restrict_to_irreps(*random_restricted(n, np.random.default_rng(seed)), irreps)


@pytest.mark.slow
@pytest.mark.parametrize("irrep", [0, 1, 2, 3])
def test_irrep_targets_match_selection_by_irrep_from_full_diagonalisation(irrep):
    irreps = [0, 1, 2, 3, 0, 1]
    h, eri = _symmetric_random(6, irreps, 40)
    dense = slater_condon_solve("restricted", h, eri, n_alpha=3, n_beta=2, irreps=irreps)
    want = dense.energies[dense.irreps == irrep][:3]
    native = solve_arrays("restricted", h, eri, n_alpha=3, n_beta=2, irreps=irreps, irrep=irrep, nroots=3)
    assert np.allclose(native.energies, want, atol=TOL)
    assert all(r.irrep == irrep for r in native.roots)
    reference = solve_arrays(
        "restricted", h, eri, n_alpha=3, n_beta=2, irreps=irreps, irrep=irrep, nroots=3, engine="pyscf"
    )
    assert np.allclose(reference.energies, want, atol=TOL)


def test_irreps_without_a_target_label_each_root():
    irreps = [0, 1, 1, 0, 2]
    h, eri = _symmetric_random(5, irreps, 41)
    dense = slater_condon_solve("restricted", h, eri, n_alpha=2, n_beta=2, irreps=irreps)
    native = solve_arrays("restricted", h, eri, n_alpha=2, n_beta=2, irreps=irreps, nroots=4)
    assert np.allclose(native.energies, dense.energies[:4], atol=TOL)
    assert [r.irrep for r in native.roots] == dense.irreps[:4].tolist()


@pytest.mark.slow
def test_irrep_and_spin_targets_combine(oxygen):
    h1, eri, ecore, orbsym = oxygen
    dense = slater_condon_solve("restricted", h1, eri, ecore, n_alpha=4, n_beta=4, irreps=orbsym)
    singlet = np.abs(dense.s_squared) < 1e-6
    for irrep in sorted(set(dense.irreps[singlet][:4].tolist())):
        want = dense.energies[singlet & (dense.irreps == irrep)][0]
        native = solve_arrays("restricted", h1, eri, ecore, n_alpha=4, n_beta=4, irreps=orbsym, irrep=irrep, two_s=0)
        assert abs(native.roots[0].energy - want) < TOL
        assert native.roots[0].irrep == irrep and native.roots[0].two_s == 0


def test_spin_orbital_and_unrestricted_irrep_targets_match_the_restricted_ones():
    irreps = [0, 1, 0, 1]
    h, eri = _symmetric_random(4, irreps, 42)
    want = solve_arrays("restricted", h, eri, n_alpha=2, n_beta=1, irreps=irreps, irrep=1, nroots=2).energies
    hs, gs = spin_orbital_integrals("restricted", h, eri, "interleaved")
    so = solve_arrays(
        "spin-orbital", hs, gs, n_alpha=2, n_beta=1, spin_layout="interleaved", irreps=irreps, irrep=1, nroots=2
    )
    assert np.allclose(so.energies, want, atol=TOL)
    h1, eri3 = np.array([h, h]), np.array([eri, eri, eri])
    for engine in ("native", "pyscf"):
        un = solve_arrays(
            "unrestricted", h1, eri3, n_alpha=2, n_beta=1, irreps=irreps, irrep=1, nroots=2, engine=engine
        )
        assert np.allclose(un.energies, want, atol=TOL)


@pytest.mark.slow
def test_water_irreps_from_pyscf_match_pyscf_symmetry_adapted_fci():
    mol = gto.M(atom="O 0 0 0; H 0 0.757 0.587; H 0 -0.757 0.587", basis="sto-3g", symmetry=True, verbose=0)
    mf = scf.RHF(mol).run()
    c = mf.mo_coeff
    orbsym = np.asarray(symm.label_orb_symm(mol, mol.irrep_id, mol.symm_orb, c))
    h = c.T @ mf.get_hcore() @ c
    eri = ao2mo.restore(1, ao2mo.kernel(mol, c), c.shape[1])
    for irrep in range(4):
        native = solve_arrays(
            "restricted", h, eri, mol.energy_nuc(), n_alpha=5, n_beta=5, irreps=orbsym, irrep=irrep, nroots=2
        )
        reference = solve_arrays(
            "restricted",
            h,
            eri,
            mol.energy_nuc(),
            n_alpha=5,
            n_beta=5,
            irreps=orbsym,
            irrep=irrep,
            nroots=2,
            engine="pyscf",
        )
        assert np.allclose(native.energies, reference.energies, atol=TOL)


def test_an_irrep_target_needs_orbital_irreps():
    h, eri = random_restricted(3, np.random.default_rng(1))
    with pytest.raises(FieldError, match="irrep"):
        solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1, irrep=1)
