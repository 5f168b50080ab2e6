"""Occupation strings, addressing, fermion signs and excitation tables."""

from __future__ import annotations

from itertools import combinations
from math import comb

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from integrity.errors import FieldError
from integrity.solver.strings import (
    address,
    annihilate,
    annihilate_many,
    create,
    create_many,
    popcount,
    strings,
)
from integrity.solver.tables import (
    annihilation_table,
    creation_table,
    excitation_entries,
    excitation_table,
    packed_pair,
)

spaces = st.integers(0, 10).flatmap(lambda n: st.tuples(st.just(n), st.integers(0, n)))


@settings(deadline=None)
@given(spaces)
def test_strings_are_all_k_subsets_in_ascending_order(space):
    n, k = space
    expected = sorted(sum(1 << p for p in occ) for occ in combinations(range(n), k))
    assert strings(n, k).tolist() == expected


@settings(deadline=None)
@given(spaces)
def test_address_of_every_string_is_its_position(space):
    n, k = space
    strs = strings(n, k)
    assert len(strs) == comb(n, k)
    assert address(strs, n, k).tolist() == list(range(len(strs)))


def test_strings_refuse_more_electrons_than_orbitals():
    with pytest.raises(FieldError, match="electrons"):
        strings(3, 4)


def test_worked_example_creation_sign_counts_occupied_orbitals_below():
    # |0b101> = a†0 a†2 |0>;  a†1 a†0 a†2 |0> = -a†0 a†1 a†2 |0>: one occupied orbital below 1.
    assert create(0b101, 1) == (0b111, -1)
    # a_2 a†0 a†2 |0> = -a†0 a_2 a†2 |0> = -a†0 |0>.
    assert annihilate(0b101, 2) == (0b001, -1)
    assert annihilate(0b101, 0) == (0b100, 1)
    assert create(0b101, 0)[1] == 0 and annihilate(0b101, 1)[1] == 0


def _fock_operator(n: int, p: int, dagger: bool) -> np.ndarray:
    """Matrix of a_p (or a†_p) on the whole Fock space, basis = integers 0 .. 2**n - 1."""
    op = np.zeros((2**n, 2**n))
    for s in range(2**n):
        new, sign = (create if dagger else annihilate)(s, p)
        if sign:
            op[new, s] = sign
    return op


@pytest.mark.parametrize("n", [1, 2, 3, 4])
def test_anticommutators_hold_on_every_pair_of_operators(n):
    a = [_fock_operator(n, p, dagger=False) for p in range(n)]
    ad = [_fock_operator(n, p, dagger=True) for p in range(n)]
    eye = np.eye(2**n)
    for p in range(n):
        assert np.array_equal(ad[p], a[p].T)
        for q in range(n):
            assert np.array_equal(a[p] @ ad[q] + ad[q] @ a[p], eye * (p == q))
            assert not np.any(a[p] @ a[q] + a[q] @ a[p])
            assert not np.any(ad[p] @ ad[q] + ad[q] @ ad[p])


@given(st.integers(0, 2**12 - 1), st.integers(0, 11))
def test_vectorised_operators_match_the_scalar_ones(string, p):
    for many, one in ((annihilate_many, annihilate), (create_many, create)):
        new, sign = many(np.array([string]), p)
        assert (int(new[0]), int(sign[0])) == one(string, p)


@given(st.integers(0, 2**12 - 1), st.integers(0, 11))
def test_creating_after_annihilating_restores_the_string_with_sign_squared(string, p):
    middle, first = annihilate(string, p)
    if first:
        assert create(middle, p) == (string, first)


def test_popcount_counts_bits_of_ints_and_arrays():
    assert popcount(0b1011) == 3
    assert popcount(np.array([0, 1, 2**40 + 1])).tolist() == [0, 1, 2]


@settings(max_examples=40, deadline=None)  # no clock in tests: a loaded machine is slow
@given(spaces, st.booleans())
def test_excitation_table_entries_are_the_operator_matrix_elements(space, packed):
    n, k = space
    table = excitation_table(n, k, packed=packed)
    strs = strings(n, k)
    seen = set()
    for target in range(len(strs)):
        for e in range(table.sign.shape[1]):
            p, q = int(table.p[target, e]), int(table.q[target, e])
            middle, s1 = annihilate(int(strs[table.source[target, e]]), q)
            result, s2 = create(middle, p)
            assert result == strs[target] and s1 * s2 == table.sign[target, e]
            label = packed_pair(p, q) if packed else p * n + q
            assert table.pair[target, e] == label
            assert (target, label) not in seen
            seen.add((target, label))
    # Every nonzero <I|E_pq|J> appears: count them by brute force.
    count = sum(
        1 for s in strs.tolist() for p in range(n) for q in range(n) if (s >> p) & 1 and (not (s >> q) & 1 or p == q)
    )
    assert len(seen) == count


@pytest.mark.slow
@settings(deadline=None)
@given(spaces)
def test_ladder_tables_agree_with_single_operators(space):
    n, k = space
    strs = strings(n, k)
    for table, op, k2 in ((creation_table, create, k + 1), (annihilation_table, annihilate, k - 1)):
        if not 0 <= k2 <= n:
            continue
        t = table(n, k)
        result_strings = strings(n, k2)
        for i, s in enumerate(strs.tolist()):
            for p in range(n):
                new, sign = op(s, p)
                assert t.sign[i, p] == sign
                if sign:
                    assert result_strings[t.index[i, p]] == new
                else:
                    assert t.index[i, p] == -1


def test_excitation_entries_between_sets_only_reach_listed_sources():
    targets = np.array([0b0011, 0b0101])
    sources = np.array([0b0011, 0b1001])
    t, p, q, s, sign = excitation_entries(targets, sources, 4)
    for ti, pi, qi, si, gi in zip(t, p, q, s, sign, strict=True):
        middle, s1 = annihilate(int(sources[si]), int(qi))
        result, s2 = create(middle, int(pi))
        assert result == targets[ti] and s1 * s2 == gi
    # 0b0101 is reached from 0b1001 by E_{2,3} and from 0b0011 by E_{2,1}.
    reached = {(int(ti), int(pi), int(qi)) for ti, pi, qi in zip(t, p, q, strict=True)}
    assert (1, 2, 3) in reached and (1, 2, 1) in reached and (0, 0, 0) in reached
