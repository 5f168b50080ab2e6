"""Positivity, Coulomb and exchange diagonals, and the Schwarz bound on pyscf integrals.

The Coulomb kernel is positive definite, so the pair matrix of real two-electron
integrals is positive semidefinite and |(pq|rs)|^2 <= (pq|pq)(rs|rs)
(Source: Helgaker, Jorgensen, Olsen, *Molecular Electronic-Structure Theory*, sec. 9.12.1;
Schwarz inequality as used in integral screening, Haeser and Ahlrichs, J. Comput. Chem. 10,
104 (1989) (both from memory)).
"""

from __future__ import annotations

import numpy as np
import pytest
from builders import with_two_electron
from pyscf import ao2mo, gto, scf

from integrity.checks import check
from integrity.checks import positivity as positivity_module
from integrity.model.hamiltonian import TwoElectron
from integrity.model.indexing import pack_pairs, unique_from_pairs
from integrity.testing.hamiltonians import random_hamiltonian

MOLECULES = [
    ("O 0 0 0.1173; H 0 0.7572 -0.4692; H 0 -0.7572 -0.4692", "sto-3g"),
    ("N 0 0 0; N 0 0 1.0977", "6-31g"),
    ("Li 0 0 0; H 0 0 1.5949", "cc-pvdz"),
    ("C 0 0 0; O 0 0 1.128", "sto-3g"),
]
POSITIVE = ["two_electron.positive"]


@pytest.fixture(scope="module", params=MOLECULES, ids=[b + " " + a.split()[0] for a, b in MOLECULES])
def integrals(request):
    atom, basis = request.param
    mol = gto.M(atom=atom, basis=basis, verbose=0)
    mf = scf.RHF(mol).run()
    ao = mol.intor("int2e")
    mo = ao2mo.restore(1, ao2mo.full(mol, mf.mo_coeff), mol.nao)
    return ao, mo


@pytest.mark.slow
def test_pyscf_integrals_are_positive_and_obey_coulomb_exchange_and_schwarz(integrals):
    for eri in integrals:
        result = check(with_two_electron(eri), only=POSITIVE).results[0]
        assert result.status == "pass", result.message
        assert result.details["schwarz_margin"] >= -1e-10
        assert result.details["coulomb_min"] >= 0
        assert result.details["exchange_min"] >= 0


@pytest.mark.slow
def test_the_cholesky_path_agrees_with_the_eigenvalue_path(integrals, monkeypatch):
    _, mo = integrals
    monkeypatch.setattr(positivity_module, "EIGEN_PAIRS", 0)
    result = check(with_two_electron(mo), only=POSITIVE).results[0]
    assert result.status == "pass", result.message
    assert "Cholesky" in result.details["method"]
    assert result.details["cholesky_rank"] <= result.details["pairs"]


@pytest.mark.slow
def test_packed_storages_give_the_same_verdict(integrals):
    _, mo = integrals
    pairs = pack_pairs(mo)
    for array, storage in ((pairs, "pairs"), (unique_from_pairs(pairs), "unique")):
        result = check(
            with_two_electron(np.ascontiguousarray(array), storage=storage, n=mo.shape[0]), only=POSITIVE
        ).results[0]
        assert result.status == "pass", result.message


def _indefinite(mo):
    """Subtract a positive rank-1 term 1.5 times the largest eigenvalue: provably indefinite."""
    n = mo.shape[0]
    pairs = pack_pairs(mo)
    values, vectors = np.linalg.eigh(pairs)
    pairs = pairs - 1.5 * values[-1] * np.outer(vectors[:, -1], vectors[:, -1])
    from integrity.model.indexing import unpack_pairs

    return unpack_pairs(pairs, n), -0.5 * values[-1]


@pytest.mark.slow
@pytest.mark.parametrize("eigen_pairs", [10**6, 0], ids=["eigenvalues", "cholesky"])
def test_an_indefinite_pair_matrix_fails_by_both_methods(integrals, monkeypatch, eigen_pairs):
    _, mo = integrals
    monkeypatch.setattr(positivity_module, "EIGEN_PAIRS", eigen_pairs)
    eri, lowest = _indefinite(mo)
    result = check(with_two_electron(eri), only=POSITIVE).results[0]
    assert result.status == "fail"
    assert result.value < -1e-8
    assert result.value <= result.details["lowest"]  # the lowest of every measured figure
    if eigen_pairs:
        assert result.details["lowest"] == pytest.approx(lowest, rel=1e-8)


def test_a_physicist_array_labelled_chemist_breaks_the_schwarz_bound(integrals):
    _, mo = integrals
    result = check(with_two_electron(np.ascontiguousarray(mo.transpose(0, 2, 1, 3))), only=POSITIVE).results[0]
    assert result.status == "fail"
    assert "Schwarz" in result.message or "positive" in result.message


def test_a_model_interaction_is_exempt_and_the_warning_names_the_field():
    eri = np.zeros((2, 2, 2, 2))
    eri[0, 0, 0, 0] = eri[1, 1, 1, 1] = -4.0  # attractive Hubbard U
    exempt = check(with_two_electron(eri, interaction="model"), only=POSITIVE).results[0]
    assert exempt.status == "warn"
    assert str(exempt.where) == "two_electron.interaction" and "outside the fingerprint" in exempt.message
    assert check(with_two_electron(eri), only=POSITIVE).results[0].status == "fail"


@pytest.mark.parametrize("basis", ["restricted", "unrestricted"])
@pytest.mark.parametrize("complex_values", [False, True])
def test_synthetic_coulomb_integrals_pass_in_every_basis(basis, complex_values):
    ham = random_hamiltonian(basis, 4, complex_values=complex_values, seed=2)
    assert check(ham, only=POSITIVE).results[0].status == "pass"


def test_an_unrestricted_file_is_judged_on_the_joint_matrix():
    ham = random_hamiltonian("unrestricted", 3, seed=4)
    eri = np.array(ham.two_electron.array)
    eri[1] *= 3.0  # the ab block alone is fine, but [[aa, ab], [ba, bb]] is no longer PSD
    result = check(ham.replace(two_electron=TwoElectron(eri, notation="chemist")), only=POSITIVE).results[0]
    assert result.status == "fail"
