"""Each index convention of integrity.model.indexing and integrity.model.slabs, asserted as its formula."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from plain_format import (
    dense_from_pairs_slow,
    n_pairs,
    pairs_from_unique_slow,
    random_values,
    two_shape,
    unique_from_pairs_slow,
)

from integrity.errors import FieldError
from integrity.model import indexing
from integrity.model import slabs as blocks
from integrity.model.hamiltonian import TwoElectron

SETTINGS = settings(max_examples=40, deadline=None, database=None)
sizes = st.integers(1, 6)
seeds = st.integers(0, 2**32 - 1)


@SETTINGS
@given(sizes)
def test_the_pair_index_of_p_ge_q_is_p_times_p_plus_one_over_two_plus_q(n):
    table = indexing.pair_table(n)
    for p, q in itertools.product(range(n), repeat=2):
        hi, lo = max(p, q), min(p, q)
        assert indexing.pair_index(p, q) == hi * (hi + 1) // 2 + lo == table[p, q]
    assert sorted(set(table.ravel().tolist())) == list(range(indexing.n_pairs(n)))
    p, q = indexing.pair_members(n)
    assert [indexing.pair_index(a, b) for a, b in zip(p, q, strict=True)] == list(range(n_pairs(n)))
    assert all(a >= b for a, b in zip(p, q, strict=True))


@SETTINGS
@given(sizes, seeds)
def test_physicist_is_chemist_with_the_middle_indices_swapped(n, seed):
    chem = np.random.default_rng(seed).standard_normal((n, n, n, n))
    phys = indexing.chemist_to_physicist(chem)
    for p, q, r, s in itertools.product(range(n), repeat=4):
        assert phys[p, q, r, s] == chem[p, r, q, s]  # <pq|rs> = (pr|qs)
    assert np.array_equal(indexing.physicist_to_chemist(phys), chem)


@SETTINGS
@given(sizes, seeds)
def test_unrestricted_stacks_keep_their_block_axis_in_notation_changes(n, seed):
    chem = np.random.default_rng(seed).standard_normal((3, n, n, n, n))
    phys = indexing.chemist_to_physicist(chem)
    for b, p, q, r, s in itertools.product(range(3), *[range(n)] * 4):
        assert phys[b, p, q, r, s] == chem[b, p, r, q, s]


@SETTINGS
@given(sizes, seeds)
def test_pairs_and_unique_storage_unpack_by_the_format_formulas(n, seed):
    rng = np.random.default_rng(seed)
    npair = n_pairs(n)
    pairs = rng.standard_normal((npair, npair))
    assert np.array_equal(indexing.unpack_pairs(pairs, n), dense_from_pairs_slow(pairs, n))
    assert np.array_equal(indexing.pack_pairs(dense_from_pairs_slow(pairs, n)), pairs)
    symmetric = np.tril(pairs) + np.tril(pairs, -1).T
    unique = indexing.unique_from_pairs(symmetric)
    assert np.array_equal(unique, unique_from_pairs_slow(symmetric))
    for i, j in itertools.product(range(npair), repeat=2):
        if i >= j:
            assert unique[i * (i + 1) // 2 + j] == symmetric[i, j]
    assert np.array_equal(indexing.pairs_from_unique(unique, npair), symmetric)
    assert indexing.npair_from_unique_length(unique.size) == npair


@pytest.mark.parametrize("length", [2, 4, 5, 7, 8, 9])
def test_a_length_that_is_no_triangular_number_has_no_pair_count(length):
    assert indexing.npair_from_unique_length(length) is None


@pytest.mark.parametrize("basis", ["restricted", "unrestricted", "spin-orbital"])
@pytest.mark.parametrize("storage", ["dense", "pairs", "unique"])
@pytest.mark.parametrize("n", [1, 2, 4, 5])
def test_two_electron_shapes_follow_the_format(basis, storage, n):
    if basis == "unrestricted" and storage == "unique":
        with pytest.raises(FieldError, match="unique"):
            indexing.two_electron_shape(basis, n, storage)
        return
    assert indexing.two_electron_shape(basis, n, storage) == two_shape(basis, n, storage)
    assert indexing.one_electron_shape(basis, n) == ((2, n, n) if basis == "unrestricted" else (n, n))


@SETTINGS
@given(st.integers(1, 6))
def test_spin_orbital_indices_interleave_or_block_the_spins(n):
    for p, spin in itertools.product(range(n), (0, 1)):
        assert indexing.spin_orbital_index(p, spin, n, "interleaved") == 2 * p + spin
        assert indexing.spin_orbital_index(p, spin, n, "blocked") == p + spin * n
    for layout in ("interleaved", "blocked"):
        spins = indexing.spin_of_spin_orbitals(2 * n, layout)
        spatial = indexing.spatial_of_spin_orbitals(2 * n, layout)
        for p, spin in itertools.product(range(n), (0, 1)):
            k = indexing.spin_orbital_index(p, spin, n, layout)
            assert (spins[k], spatial[k]) == (spin, p)


def test_an_unknown_spin_layout_is_refused_naming_the_field():
    with pytest.raises(FieldError, match=r"orbitals\.spin_layout"):
        indexing.spin_orbital_index(0, 0, 2, "mixed")


@st.composite
def stored_blocks(draw):
    """A real two-electron block in some storage and notation, with its dense chemist form."""
    n = draw(st.integers(1, 5))
    rng = np.random.default_rng(draw(seeds))
    storage = draw(st.sampled_from(["dense", "pairs", "unique"]))
    npair = n_pairs(n)
    if storage == "dense":
        notation = draw(st.sampled_from(["chemist", "physicist"]))
        chem = random_values(rng, (n, n, n, n))
        stored = chem if notation == "chemist" else chem.transpose(0, 2, 1, 3).copy()
        return n, notation, storage, stored, chem
    pairs = random_values(rng, (npair, npair))
    if storage == "unique":
        pairs = np.tril(pairs) + np.tril(pairs, -1).T
        stored = unique_from_pairs_slow(pairs)
        assert np.array_equal(pairs_from_unique_slow(stored, npair), pairs)
    else:
        stored = pairs
    return n, "chemist", storage, stored, dense_from_pairs_slow(pairs, n)


@SETTINGS
@given(stored_blocks(), st.integers(1, 10_000), st.data())
def test_slabs_rows_columns_and_exchange_diagonals_read_the_dense_chemist_array(block, budget, data):
    n, notation, storage, stored, chem = block
    seen = np.full(chem.shape, np.nan)
    for p0, slab in blocks.chemist_slabs(stored, notation, storage, n, slab_bytes=budget):
        seen[p0 : p0 + len(slab)] = slab
    assert np.array_equal(seen.view(np.uint8), chem.view(np.uint8))
    p, q = data.draw(st.integers(0, n - 1)), data.draw(st.integers(0, n - 1))
    assert np.array_equal(blocks.chemist_row(stored, notation, storage, n, p, q), chem[p, q])
    assert np.array_equal(blocks.chemist_column(stored, notation, storage, n, p, q), chem[:, :, p, q])
    diagonal = blocks.exchange_diagonal(stored, notation, storage, n)
    for a, b in itertools.product(range(n), repeat=2):
        assert diagonal[a, b] == chem[a, b, b, a]
    two = TwoElectron(stored, notation=notation, storage=storage)
    assert np.array_equal(blocks.dense_chemist(two, "restricted", n), chem)
