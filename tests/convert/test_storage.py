"""Dense <-> pairs <-> unique: held to pyscf, to plain loops, and to the refusals it promises.

Pair index p(p+1)/2 + q and the unique lower triangle come from docs/format.md;
pyscf's ``ao2mo.restore`` (symmetry 1, 4, 8) uses the same packing and is the
outside reference here.
"""

from __future__ import annotations

import itertools
import re
import tracemalloc

import numpy as np
import pytest
from builders import (
    PROPERTY_SETTINGS,
    lower_triangle,
    n_pairs,
    pair,
    restricted,
    same_bits,
    seeded,
    spin_orbital_of,
    unrestricted,
)
from hypothesis import given
from hypothesis import strategies as st

from integrity.convert import convert, convert_storage
from integrity.convert.storage import (
    dense_of_pairs,
    pairs_of_dense,
    pairs_of_unique,
    unique_of_dense,
    unique_of_pairs,
)
from integrity.errors import FieldError, RefusedError
from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, TwoElectron
from integrity.model.indexing import unpack_pairs

WATER = "O 0 0 0; H 0 0.757 0.587; H 0 -0.757 0.587"


@pytest.fixture(scope="module")
def water():
    """pyscf integrals of water/STO-3G: AO int2e (dense, s1) and MO integrals (ao2mo.full, s4)."""
    from pyscf import ao2mo, gto, scf

    mol = gto.M(atom=WATER, basis="sto-3g", verbose=0)
    mf = scf.RHF(mol).run()
    return {
        "ao": mol.intor("int2e"),
        "mo4": ao2mo.full(mol, mf.mo_coeff),
        "n": mol.nao,
        "restore": ao2mo.restore,
    }


def _wrap(dense: np.ndarray, **two) -> Hamiltonian:
    n = dense.shape[-1]
    return Hamiltonian(
        Orbitals(n, "restricted"),
        Electrons(1, 1),
        0.0,
        np.eye(n),
        TwoElectron(dense, notation="chemist", **two),
    )


def test_packing_pyscf_ao_integrals_agrees_with_ao2mo_restore_four_and_eight(water):
    ao, n, restore = water["ao"], water["n"], water["restore"]
    assert np.array_equal(pairs_of_dense(ao), restore(4, ao, n))
    assert np.array_equal(unique_of_dense(ao), restore(8, ao, n))


def test_unpacking_pyscf_mo_integrals_agrees_with_ao2mo_restore_one(water):
    mo4, n, restore = water["mo4"], water["n"], water["restore"]
    mo8 = restore(8, mo4, n)
    assert np.array_equal(dense_of_pairs(mo4, n), restore(1, mo4, n))
    assert np.array_equal(dense_of_pairs(pairs_of_unique(mo8, n_pairs(n)), n), restore(1, mo8, n))
    assert np.array_equal(pairs_of_unique(mo8, n_pairs(n)), restore(4, mo8, n))
    assert np.array_equal(unique_of_pairs(mo4), mo8)


def test_converting_pyscf_integrals_to_unique_records_the_rounding_it_drops(water):
    # libcint's (pq|rs) and (rs|pq) differ in the last bits (about 1e-15, measured, not
    # published), so packing is within the tolerance but not exact
    ham = _wrap(water["ao"])
    result = convert(ham, storage="unique")
    entry = result.steps[0]
    assert np.array_equal(result.hamiltonian.two_electron.array, water["restore"](8, water["ao"], 7))
    assert 0 < entry["dropped_max_deviation"] < 1e-13 and entry["forced"] is False
    assert entry["fingerprint_changed"] is True
    assert fingerprint(result.hamiltonian) != fingerprint(ham)


def test_pair_matrix_and_unique_triangle_match_element_by_element_loops():
    n = 4
    chem = restricted(n, seeded("loops")).two_electron.array
    pairs = pairs_of_dense(chem)
    for p, q, r, s in itertools.product(range(n), repeat=4):
        if p >= q and r >= s:
            assert pairs[pair(p, q), pair(r, s)] == chem[p, q, r, s]
    assert np.array_equal(unique_of_dense(chem), lower_triangle(pairs))


def _storage_cases():
    return st.sampled_from(
        [
            ("restricted", "dense", "pairs"),
            ("restricted", "dense", "unique"),
            ("restricted", "pairs", "unique"),
            ("restricted", "unique", "dense"),
            ("restricted", "pairs", "dense"),
            ("spin-orbital", "dense", "unique"),
            ("spin-orbital", "dense", "pairs"),
            ("unrestricted", "dense", "pairs"),
            ("unrestricted", "pairs", "dense"),
        ]
    )


@PROPERTY_SETTINGS
@given(
    case=_storage_cases(),
    n=st.integers(1, 5),
    layout=st.sampled_from(["interleaved", "blocked"]),
    seed=st.integers(0, 2**32 - 1),
)
def test_every_storage_change_and_its_inverse_return_the_same_bits_and_fingerprint(case, n, layout, seed):
    basis, source, target = case
    rng = np.random.default_rng(seed)
    if basis == "unrestricted":
        ham = unrestricted(n, rng, storage=source)
    elif basis == "restricted":
        ham = restricted(n, rng, storage=source)
    else:
        ham = convert(spin_orbital_of(restricted(min(n, 3), rng), layout), storage=source).hamiltonian
    there = convert_storage(ham, target)
    back = convert_storage(there.hamiltonian, source)
    assert there.hamiltonian.two_electron.storage == target
    assert same_bits(back.hamiltonian.two_electron.array, ham.two_electron.array)
    assert fingerprint(there.hamiltonian) == fingerprint(ham) == fingerprint(back.hamiltonian)
    assert not there.fingerprint_changed and not back.fingerprint_changed


def _broken(delta: float) -> Hamiltonian:
    ham = restricted(3, seeded("broken"), irreps=False)
    chem = ham.two_electron.array.copy()
    chem[0, 1, 2, 2] += delta  # its partners (1,0,2,2) and (2,2,0,1) keep the old value
    return ham.replace(two_electron=TwoElectron(chem, notation="chemist"), references=())


def test_lossy_packing_is_refused_with_the_deviation_where_and_the_tolerance():
    with pytest.raises(RefusedError) as caught:
        convert(_broken(1e-6), storage="unique")
    message = str(caught.value)
    assert caught.value.field == "two_electron"
    assert "(pq|rs) = (qp|rs)" in message and "1e-06" in message and "1e-10" in message
    assert re.search(r"\((0, 1|1, 0), 2, 2\)", message) and "--allow-loss" in message
    assert re.search(r"for 2 of 81 elements", message)


def test_forced_packing_keeps_the_lower_triangle_and_records_the_deviation_dropped():
    ham = _broken(1e-6)
    result = convert(ham, storage="pairs", allow_loss=True)
    entry = result.steps[0]
    kept = result.hamiltonian.two_electron.array[pair(1, 0), pair(2, 2)]
    assert kept == ham.two_electron.array[1, 0, 2, 2]  # p >= q is kept, (0,1,2,2) dropped
    assert entry["dropped_max_deviation"] == pytest.approx(1e-6, rel=1e-9)
    assert entry["forced"] is True and entry["fingerprint_changed"] is True
    assert result.hamiltonian.provenance["history"][-1] == entry


def test_packing_within_the_tolerance_needs_no_force_but_says_what_it_dropped():
    result = convert(_broken(1e-12), storage="unique")
    entry = result.steps[0]
    assert entry["dropped_max_deviation"] == pytest.approx(1e-12, rel=1e-3)
    assert entry["forced"] is False and result.fingerprint_changed


def test_a_wider_tolerance_admits_what_the_default_refuses():
    result = convert(_broken(1e-6), storage="unique", tolerance=1e-5)
    assert result.steps[0]["forced"] is False


def test_a_negative_zero_partner_counts_as_a_fingerprint_change_though_the_values_are_equal():
    chem = np.zeros((2, 2, 2, 2))
    chem[1, 0, 0, 0] = -0.0  # (10|00) = -0.0 but (01|00) = 0.0: equal values, different bits
    ham = _wrap(chem)
    result = convert(ham, storage="pairs")
    assert result.fingerprint_changed
    assert fingerprint(result.hamiltonian) != fingerprint(ham)
    assert result.steps[0]["dropped_max_deviation"] == 0.0


def test_physicist_arrays_cannot_be_packed_and_the_message_names_the_flag_to_add():
    ham = restricted(2, seeded("phys"), notation="physicist")
    with pytest.raises(FieldError, match=r"chemist notation only.*notation='chemist'"):
        convert(ham, storage="pairs")
    packed = convert(ham, storage="pairs", notation="chemist")
    assert [s["step"] for s in packed.steps] == ["notation", "storage"]


def test_complex_arrays_cannot_be_packed():
    ham = restricted(2, seeded("complex"), is_complex=True)
    with pytest.raises(FieldError, match=r"storage 'unique' is defined for real values only"):
        convert(ham, storage="unique")


def test_unrestricted_files_have_no_unique_storage():
    with pytest.raises(FieldError, match=r"'unique' is not defined for unrestricted.*'pairs'"):
        convert(unrestricted(2, seeded("u")), storage="unique")


def test_unrestricted_packing_checks_each_block_and_names_the_block():
    ham = unrestricted(3, seeded("ab broken"))
    chem = ham.two_electron.array.copy()
    chem[1, 0, 1, 2, 0] += 1e-5  # ab block: (01|20) != (10|20)
    broken = ham.replace(two_electron=TwoElectron(chem, notation="chemist"), references=())
    with pytest.raises(RefusedError, match=r"in the ab block breaks it by up to 1e-05"):
        convert(broken, storage="pairs")


def test_pairs_to_unique_checks_the_pair_matrix_and_reports_orbital_indices():
    ham = restricted(3, seeded("pair matrix"), storage="pairs")
    matrix = ham.two_electron.array.copy()
    matrix[pair(2, 1), pair(0, 0)] += 1e-4
    broken = ham.replace(two_electron=TwoElectron(matrix, notation="chemist", storage="pairs"), references=())
    with pytest.raises(RefusedError, match=r"\(pq\|rs\) = \(rs\|pq\).*0\.0001 at \((2, 1, 0, 0|0, 0, 2, 1)\)"):
        convert(broken, storage="unique")


def test_a_packed_file_changed_to_physicist_becomes_dense_in_two_recorded_steps():
    ham = restricted(3, seeded("to phys"), storage="unique")
    result = convert(ham, notation="physicist")
    assert result.hamiltonian.two_electron.storage == "dense"
    assert [(s["step"], s["from"], s["to"]) for s in result.steps] == [
        ("storage", "unique", "dense"),
        ("notation", "chemist", "physicist"),
    ]
    assert fingerprint(result.hamiltonian) == fingerprint(ham)


def _peak_bytes(action) -> int:
    tracemalloc.start()
    try:
        tracemalloc.reset_peak()
        before = tracemalloc.get_traced_memory()[0]
        result = action()
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    del result
    return peak - before


def test_packing_holds_no_second_full_copy_of_the_dense_array():
    n = 36
    rng = seeded("memory")
    low = rng.standard_normal((n_pairs(n), 4))
    dense = unpack_pairs(low @ low.T, n)
    ham = _wrap(dense)
    peak = _peak_bytes(lambda: convert(ham, storage="unique"))
    # the input plus less than one more copy: the unique array (1/8) and bounded blocks
    assert peak < dense.nbytes, f"peak {peak} bytes for a {dense.nbytes}-byte array"
