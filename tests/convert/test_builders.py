"""The random Hamiltonians the other tests use really have the symmetry they claim.

Relations: the real 8-fold group (Source: Helgaker, Jorgensen, Olsen, *Molecular
Electronic-Structure Theory* (2000), ch. 9 (from memory), as in
integrity/checks/relations.py);
the complex 4-fold group and the unrestricted ab block follow from the
integrals' definitions in docs/format.md (derived in builders).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from builders import complex_chemist, exact_orbits, real_chemist, seeded, unrestricted


@pytest.mark.parametrize("n", [1, 2, 3, 4])
def test_the_complex_construction_obeys_the_four_fold_relations_before_they_are_made_exact(n):
    rng = seeded(f"complex {n}")
    b = rng.standard_normal((n, n, 3)) + 1j * rng.standard_normal((n, n, 3))
    b = b + b.conj().transpose(1, 0, 2)
    w = rng.standard_normal((3, 3))
    w = w + w.T
    chem = np.einsum("pqk,kl,rsl->pqrs", b, w, b)
    assert np.allclose(chem, chem.transpose(2, 3, 0, 1), atol=1e-13, rtol=0)
    assert np.allclose(chem, chem.transpose(1, 0, 3, 2).conj(), atol=1e-13, rtol=0)
    if n > 1:  # complex integrals do not have (pq|rs) = (qp|rs)
        assert not np.allclose(chem, chem.transpose(1, 0, 2, 3))


@pytest.mark.parametrize("n", [1, 2, 3])
def test_exact_orbits_make_the_complex_relations_hold_bit_for_bit(n):
    chem = complex_chemist(n, seeded(f"exact {n}"))
    for p, q, r, s in itertools.product(range(n), repeat=4):
        assert chem[p, q, r, s] == chem[r, s, p, q]
        assert chem[p, q, r, s] == np.conj(chem[q, p, s, r])
    assert np.all(np.signbit(chem.imag[np.isclose(chem.imag, 0)]) == 0)


def test_exact_orbits_keep_the_values_of_an_already_symmetric_array():
    chem = complex_chemist(3, seeded("keep"))
    assert np.array_equal(exact_orbits(chem, pair_swap=True), chem)


@pytest.mark.parametrize("n", [1, 2, 3])
def test_the_real_construction_has_all_eight_fold_relations_exactly(n):
    chem, _ = real_chemist(n, seeded(f"real {n}"))
    for perm in [(1, 0, 2, 3), (0, 1, 3, 2), (2, 3, 0, 1)]:
        assert np.array_equal(chem, chem.transpose(perm))


@pytest.mark.parametrize("is_complex", [False, True])
def test_the_unrestricted_ab_block_has_its_own_symmetry_but_no_pair_swap(is_complex):
    ham = unrestricted(3, seeded(f"ab {is_complex}"), is_complex=is_complex)
    ab = np.asarray(ham.two_electron.array)[1]
    if is_complex:
        assert np.array_equal(ab, ab.transpose(1, 0, 3, 2).conj())
    else:
        assert np.array_equal(ab, ab.transpose(1, 0, 2, 3))
        assert np.array_equal(ab, ab.transpose(0, 1, 3, 2))
    assert not np.allclose(ab, ab.transpose(2, 3, 0, 1))
