"""The permutational relations as published, tested on integrals pyscf computed.

Sources: C. D. Sherrill, "Permutational symmetries of one- and two-electron
integrals" (lecture notes, Georgia Tech); T. Helgaker, P. Jorgensen, J. Olsen,
*Molecular Electronic-Structure Theory* (Wiley, 2000), sec. 1.4 and eq. 9.2.4-9.2.6
(both from memory).
Real orbitals: (pq|rs) = (qp|rs) = (pq|sr) = (qp|sr) = (rs|pq) = (sr|pq) = (rs|qp) = (sr|qp).
Complex orbitals: (pq|rs) = (rs|pq) = (qp|sr)* = (sr|qp)*.
Physicist: <pq|rs> = (pr|qs).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from builders import with_two_electron
from pyscf import ao2mo, gto, scf

from integrity.checks import check
from integrity.checks.relations import orbit, relations_for

REAL_EIGHT = [  # (pq|rs) equals X[...] under these index orders (Sherrill, eq. 7, from memory)
    (0, 1, 2, 3),
    (1, 0, 2, 3),
    (0, 1, 3, 2),
    (1, 0, 3, 2),
    (2, 3, 0, 1),
    (3, 2, 0, 1),
    (2, 3, 1, 0),
    (3, 2, 1, 0),
]
COMPLEX_FOUR = [((0, 1, 2, 3), False), ((2, 3, 0, 1), False), ((1, 0, 3, 2), True), ((3, 2, 1, 0), True)]


@pytest.fixture(scope="module")
def water():
    mol = gto.M(atom="O 0 0 0.1173; H 0 0.7572 -0.4692; H 0 -0.7572 -0.4692", basis="sto-3g", verbose=0)
    mf = scf.RHF(mol).run()
    ao = mol.intor("int2e")
    mo = ao2mo.restore(1, ao2mo.full(mol, mf.mo_coeff), mol.nao)
    return mol, mf, ao, mo


def _complex_mo(mol, mf, ao):
    """MO integrals over complex orbitals C U, U a random unitary, by the textbook transformation."""
    rng = np.random.default_rng(5)
    n = mf.mo_coeff.shape[1]
    unitary, _ = np.linalg.qr(rng.standard_normal((n, n)) + 1j * rng.standard_normal((n, n)))
    c = mf.mo_coeff @ unitary
    return np.einsum("mp,nq,lr,ts,mnlt->pqrs", c.conj(), c, c.conj(), c, ao, optimize=True)


def _index_orders_of_group(relations):
    """The index orders reachable from (p, q, r, s) under the generated group, with their conjugation."""
    generic = (0, 1, 2, 3)
    return {(image, conj) for image, _sign, conj in orbit(generic, relations)}


def test_our_real_generators_produce_exactly_the_published_eight_fold_group():
    assert _index_orders_of_group(relations_for("chemist", False)) == {(p, False) for p in REAL_EIGHT}


def test_our_complex_generators_produce_exactly_the_published_four_fold_group():
    assert _index_orders_of_group(relations_for("chemist", True)) == set(COMPLEX_FOUR)


@pytest.mark.parametrize("order", REAL_EIGHT)
def test_each_published_real_relation_holds_for_pyscf_integrals(water, order):
    _, _, ao, mo = water
    for integrals in (ao, mo):
        assert np.allclose(integrals, integrals.transpose(np.argsort(order)), atol=1e-12, rtol=0)


@pytest.mark.parametrize(("order", "conjugated"), COMPLEX_FOUR)
def test_each_published_complex_relation_holds_for_complex_orbital_integrals(water, order, conjugated):
    mol, mf, ao, _ = water
    chem = _complex_mo(mol, mf, ao)
    image = chem.transpose(np.argsort(order))
    assert np.allclose(chem, image.conj() if conjugated else image, atol=1e-12, rtol=0)
    assert not np.allclose(chem, chem.transpose(1, 0, 2, 3), atol=1e-6)  # no longer 8-fold


def test_physicist_relation_matches_an_explicit_loop_on_pyscf_integrals(water):
    _, _, _, mo = water
    n = mo.shape[0]
    phys = np.empty_like(mo)
    for p, q, r, s in itertools.product(range(n), repeat=4):
        phys[p, q, r, s] = mo[p, r, q, s]  # <pq|rs> = (pr|qs)
    from integrity.model.indexing import chemist_to_physicist

    assert np.array_equal(chemist_to_physicist(mo), phys)


def test_pyscf_integrals_pass_the_symmetry_and_notation_checks_in_both_notations(water):
    mol, mf, ao, mo = water
    for eri in (ao, mo, _complex_mo(mol, mf, ao)):
        for notation, array in (("chemist", eri), ("physicist", eri.transpose(0, 2, 1, 3))):
            report = check(
                with_two_electron(array, notation=notation), only=["two_electron.symmetry", "two_electron.notation"]
            )
            assert [r.status for r in report.results] == ["pass", "pass"], [r.message for r in report.results]


def test_a_physicist_array_labelled_chemist_fails_the_notation_check(water):
    _, _, _, mo = water
    report = check(with_two_electron(mo.transpose(0, 2, 1, 3), notation="chemist"), only=["two_electron.notation"])
    result = report.results[0]
    assert result.status == "fail"
    assert "physicist" in result.message


def test_a_chemist_array_labelled_physicist_fails_the_notation_check(water):
    _, _, _, mo = water
    result = check(with_two_electron(mo, notation="physicist"), only=["two_electron.notation"]).results[0]
    assert result.status == "fail"
    assert "chemist" in result.message
