"""Orbital basis and spin layout: restricted / unrestricted <-> spin-orbital, and antisymmetrizing.

Index maps from docs/format.md: spatial p, spin s -> 2p + s (interleaved) or p + s n
(blocked). Spin-orbital integrals vanish unless spins match,
(P Q|R S) = (pq|rs) delta(s_P, s_Q) delta(s_R, s_S), and
<pq||rs> = <pq|rs> - <pq|sr> (docs/format.md; Source: Szabo and Ostlund,
*Modern Quantum Chemistry*, ch. 2 (from memory)).
"""

from __future__ import annotations

import itertools
import tracemalloc

import numpy as np
import pytest
from builders import (
    PROPERTY_SETTINGS,
    antisymmetrized_of,
    embedded,
    generic_spin_orbital,
    physicist_of,
    restricted,
    same_bits,
    seeded,
    spin_orbital,
    spin_orbital_of,
    unrestricted,
)
from hypothesis import given
from hypothesis import strategies as st

from integrity.convert import antisymmetrize, convert, convert_basis, convert_spin_layout
from integrity.errors import FieldError, RefusedError
from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, Reference, TwoElectron
from integrity.model.indexing import unpack_pairs

LAYOUTS = ["interleaved", "blocked"]


def _same_hamiltonian(a: Hamiltonian, b: Hamiltonian) -> None:
    """Same arrays (bits), flags, metadata, references and fingerprint."""
    assert same_bits(a.one_electron, b.one_electron)
    assert same_bits(a.two_electron.array, b.two_electron.array)
    assert (a.two_electron.notation, a.two_electron.storage) == (
        b.two_electron.notation,
        b.two_electron.storage,
    )
    assert a.orbitals == b.orbitals and a.electrons == b.electrons
    assert a.references == b.references
    assert fingerprint(a) == fingerprint(b)


@pytest.mark.parametrize("layout", LAYOUTS)
@pytest.mark.parametrize("basis", ["restricted", "unrestricted"])
@pytest.mark.parametrize("is_complex", [False, True])
def test_spin_orbital_arrays_match_the_element_by_element_embedding(layout, basis, is_complex):
    build = restricted if basis == "restricted" else unrestricted
    ham = build(3, seeded(f"embed {basis} {layout} {is_complex}"), is_complex=is_complex)
    h_so, eri_so = embedded(ham, layout)
    so = convert(ham, basis="spin-orbital", spin_layout=layout).hamiltonian
    assert so.orbitals.count == 6 and so.orbitals.spin_layout == layout
    assert np.array_equal(so.one_electron, h_so)
    assert np.array_equal(so.two_electron.array, eri_so)
    phys = convert(ham, basis="spin-orbital", spin_layout=layout, notation="physicist").hamiltonian
    assert np.array_equal(phys.two_electron.array, physicist_of(eri_so))


def test_a_spin_orbital_result_is_interleaved_unless_told_otherwise():
    so = convert(restricted(2, seeded("default layout")), basis="spin-orbital").hamiltonian
    assert so.orbitals.spin_layout == "interleaved"


@PROPERTY_SETTINGS
@given(
    basis=st.sampled_from(["restricted", "unrestricted"]),
    n=st.integers(1, 4),
    layout=st.sampled_from(LAYOUTS),
    notation=st.sampled_from(["chemist", "physicist"]),
    is_complex=st.booleans(),
    seed=st.integers(0, 2**32 - 1),
)
def test_to_spin_orbitals_and_back_is_bit_exact_with_irreps_and_references(
    basis, n, layout, notation, is_complex, seed
):
    build = restricted if basis == "restricted" else unrestricted
    ham = build(n, np.random.default_rng(seed), is_complex=is_complex, notation=notation)
    there = convert(ham, basis="spin-orbital", spin_layout=layout)
    back = convert(there.hamiltonian, basis=basis)
    assert there.fingerprint_changed and back.fingerprint_changed
    assert "dropped_max_deviation" not in back.steps[-1]
    _same_hamiltonian(back.hamiltonian.replace(provenance=ham.provenance), ham)


@PROPERTY_SETTINGS
@given(
    basis=st.sampled_from(["restricted", "unrestricted"]),
    n=st.integers(1, 3),
    layout=st.sampled_from(LAYOUTS),
    notation=st.sampled_from(["chemist", "physicist"]),
    seed=st.integers(0, 2**32 - 1),
)
def test_a_separable_spin_orbital_file_goes_to_spatial_orbitals_and_back_bit_exactly(basis, n, layout, notation, seed):
    build = restricted if basis == "restricted" else unrestricted
    so = spin_orbital_of(build(n, np.random.default_rng(seed)), layout, notation)
    spatial = convert(so, basis=basis)
    back = convert(spatial.hamiltonian, basis="spin-orbital", spin_layout=layout).hamiltonian
    assert spatial.hamiltonian.two_electron.notation == notation
    _same_hamiltonian(back.replace(provenance=None), so)


@PROPERTY_SETTINGS
@given(
    m_half=st.integers(1, 3),
    is_complex=st.booleans(),
    notation=st.sampled_from(["chemist", "physicist"]),
    seed=st.integers(0, 2**32 - 1),
)
def test_interleaved_to_blocked_and_back_is_bit_exact(m_half, is_complex, notation, seed):
    ham = generic_spin_orbital(2 * m_half, np.random.default_rng(seed), is_complex=is_complex, notation=notation)
    there = convert_spin_layout(ham, "blocked")
    back = convert_spin_layout(there.hamiltonian, "interleaved").hamiltonian
    assert there.steps[0]["fingerprint_changed"] is True
    _same_hamiltonian(back.replace(provenance=None), ham)


def test_the_blocked_layout_renumbers_every_index_by_the_same_map():
    n = 3
    ham = generic_spin_orbital(2 * n, seeded("renumber"))
    blocked = convert_spin_layout(ham, "blocked").hamiltonian
    new = {spin_orbital(p, s, n, "interleaved"): spin_orbital(p, s, n, "blocked") for p in range(n) for s in (0, 1)}
    for P, Q, R, S in itertools.product(range(2 * n), repeat=4):
        assert blocked.two_electron.array[new[P], new[Q], new[R], new[S]] == ham.two_electron.array[P, Q, R, S]
    for P, Q in itertools.product(range(2 * n), repeat=2):
        assert blocked.one_electron[new[P], new[Q]] == ham.one_electron[P, Q]
    occ = ham.reference("hf").occupation
    assert blocked.reference("hf").occupation == tuple(tuple(new[i] for i in spin) for spin in occ)


def test_irreps_follow_the_spatial_orbital_and_occupations_map_to_spin_orbitals():
    ham = restricted(3, seeded("metadata")).replace(
        orbitals=Orbitals(3, "restricted", point_group="C2v", irreps=(0, 3, 1)),
        electrons=Electrons(2, 1),
        references=(Reference("hf", "hf", 0.0, occupation=((0, 2), (1,))),),
    )
    inter = convert(ham, basis="spin-orbital", spin_layout="interleaved").hamiltonian
    block = convert(ham, basis="spin-orbital", spin_layout="blocked").hamiltonian
    assert inter.orbitals.irreps == (0, 0, 3, 3, 1, 1) and block.orbitals.irreps == (
        0,
        3,
        1,
        0,
        3,
        1,
    )
    assert inter.reference("hf").occupation == ((0, 4), (3,))
    assert block.reference("hf").occupation == ((0, 2), (4,))
    assert inter.electrons == block.electrons == Electrons(2, 1)
    assert inter.orbitals.point_group == "C2v"


def test_a_spin_orbital_occupation_listed_under_the_wrong_spin_is_refused():
    so = spin_orbital_of(restricted(2, seeded("wrong spin")), "interleaved")
    bad = so.replace(references=(Reference("odd", "hf", 0.0, occupation=((1,), ())),))
    with pytest.raises(RefusedError, match=r"spin orbital 1 is listed as alpha but is a beta spin orbital"):
        convert(bad, basis="restricted")


def test_alpha_and_beta_spin_orbitals_with_different_irreps_cannot_share_a_spatial_orbital():
    so = spin_orbital_of(restricted(2, seeded("irreps")), "blocked")
    bad = so.replace(
        orbitals=Orbitals(4, "spin-orbital", spin_layout="blocked", point_group="C2v", irreps=(0, 1, 2, 1)),
        references=(),
    )
    with pytest.raises(
        RefusedError,
        match=r"spin orbitals 0 \(spatial 0 alpha\) and 2 \(spatial 0 beta\) "
        r"have irreps 0 and 2",
    ):
        convert(bad, basis="unrestricted")
    forced = convert(bad, basis="unrestricted", allow_loss=True)
    assert forced.hamiltonian.orbitals.irreps is None and forced.steps[-1]["dropped_irreps"] is True


def _coupled(layout="interleaved") -> Hamiltonian:
    so = spin_orbital_of(restricted(2, seeded("coupled"), irreps=False), layout)
    return so.replace(references=())


def test_alpha_beta_coupling_in_the_one_electron_part_is_refused_with_its_value_and_indices():
    so = _coupled()
    h = so.one_electron.copy()
    h[2, 1] = h[1, 2] = 0.03125  # spin orbital 2 = spatial 1 alpha, 1 = spatial 0 beta
    with pytest.raises(RefusedError) as caught:
        convert(so.replace(one_electron=h), basis="unrestricted")
    assert caught.value.field == "one_electron"
    assert "no alpha-beta coupling" in str(caught.value)
    assert "= 0.0312" in str(caught.value) and "spatial 1 alpha" in str(caught.value)
    assert "spatial 0 beta" in str(caught.value) and "1e-10" in str(caught.value)


def test_a_mixed_spin_two_electron_element_is_refused_naming_its_spin_orbitals():
    so = _coupled()
    eri = so.two_electron.array.copy()
    for P, Q, R, S in [(0, 1, 2, 2), (1, 0, 2, 2), (2, 2, 0, 1), (2, 2, 1, 0)]:
        eri[P, Q, R, S] = 0.0078125
    bad = so.replace(two_electron=TwoElectron(eri, notation="chemist"))
    with pytest.raises(
        RefusedError,
        match=r"only the \(aa\|aa\), \(aa\|bb\), \(bb\|aa\), \(bb\|bb\) spin "
        r"blocks.*\((\d \d\|2 2|2 2\|\d \d)\) = 0.00781",
    ):
        convert(bad, basis="unrestricted")
    forced = convert(bad, basis="unrestricted", allow_loss=True)
    assert forced.steps[-1]["dropped_max_deviation"] == 0.0078125 and forced.steps[-1]["forced"]


def test_an_aabb_block_that_is_not_the_bbaa_block_transposed_is_refused():
    so = _coupled("blocked")
    eri = so.two_electron.array.copy()
    eri[0, 0, 2, 3] += 0.5  # (0a 0a|0b 1b) changed, (0b 1b|0a 0a) not
    eri[0, 0, 3, 2] += 0.5
    bad = so.replace(two_electron=TwoElectron(eri, notation="chemist"))
    with pytest.raises(
        RefusedError,
        match=r"\(aa\|bb\) block to equal the \(bb\|aa\) block transposed, "
        r"but \(0 0\|[23] [23]\) = .* but \([23] [23]\|0 0\) =",
    ):
        convert(bad, basis="unrestricted")


def test_a_spin_orbital_file_from_unrestricted_orbitals_cannot_become_restricted():
    so = convert(unrestricted(2, seeded("u to r")), basis="spin-orbital").hamiltonian
    with pytest.raises(RefusedError, match=r"equal alpha and beta one-electron blocks"):
        convert(so, basis="restricted")
    assert convert(so, basis="unrestricted").hamiltonian.basis == "unrestricted"


def test_a_generic_spin_orbital_hamiltonian_is_refused_in_either_notation():
    for notation in ("chemist", "physicist"):
        ham = generic_spin_orbital(4, seeded("generic"), notation=notation)
        with pytest.raises(RefusedError, match=r"spin-orbital -> unrestricted needs"):
            convert(ham, basis="unrestricted")


def test_restricted_to_unrestricted_and_back_is_bit_exact():
    ham = restricted(3, seeded("r u r"), notation="physicist")
    there = convert(ham, basis="unrestricted").hamiltonian
    assert np.array_equal(there.two_electron.array[1], ham.two_electron.array)
    _same_hamiltonian(convert(there, basis="restricted").hamiltonian.replace(provenance=ham.provenance), ham)


def test_unrestricted_orbitals_that_differ_cannot_become_restricted():
    with pytest.raises(RefusedError, match=r"unrestricted -> restricted needs equal alpha and beta"):
        convert_basis(unrestricted(2, seeded("u r")), "restricted")


@pytest.mark.parametrize("layout", LAYOUTS)
@pytest.mark.parametrize("is_complex", [False, True])
def test_antisymmetrized_integrals_are_the_plain_ones_minus_the_exchanged(layout, is_complex):
    so = generic_spin_orbital(
        4,
        seeded(f"anti {layout} {is_complex}"),
        is_complex=is_complex,
        layout=layout,
        notation="physicist",
    )
    result = antisymmetrize(so)
    two = result.hamiltonian.two_electron
    assert two.antisymmetrized is True and two.notation == "physicist"
    assert same_bits(two.array, antisymmetrized_of(so.two_electron.array))
    assert result.fingerprint_changed and fingerprint(result.hamiltonian) != fingerprint(so)


def test_antisymmetrizing_an_all_zero_array_leaves_the_fingerprint_and_says_so():
    so = Hamiltonian(
        Orbitals(2, "spin-orbital", spin_layout="blocked"),
        Electrons(1, 0),
        0.0,
        np.eye(2),
        TwoElectron(np.zeros((2, 2, 2, 2)), notation="physicist"),
    )
    result = antisymmetrize(so)
    assert not result.fingerprint_changed and fingerprint(result.hamiltonian) == fingerprint(so)


def test_layout_notation_and_antisymmetrization_in_one_call_equal_the_steps_one_by_one():
    so = generic_spin_orbital(6, seeded("fused"), layout="interleaved")
    together = convert(so, spin_layout="blocked", notation="physicist", antisymmetrize=True)
    one = convert_spin_layout(so, "blocked").hamiltonian
    two = convert(one, notation="physicist").hamiltonian
    three = antisymmetrize(two).hamiltonian
    assert same_bits(together.hamiltonian.two_electron.array, three.two_electron.array)
    assert [s["step"] for s in together.steps] == ["spin_layout", "notation", "antisymmetrize"]


def test_antisymmetrizing_needs_physicist_notation_and_says_which_flag_to_add():
    so = generic_spin_orbital(2, seeded("needs physicist"))
    with pytest.raises(
        FieldError,
        match=r"physicist notation only.*add notation='physicist' "
        r"\(--notation physicist\)",
    ):
        convert(so, antisymmetrize=True)
    with pytest.raises(FieldError, match=r"spin-orbital basis only.*add basis='spin-orbital'"):
        convert(restricted(2, seeded("needs so")), antisymmetrize=True, notation="physicist")
    done = convert(
        restricted(2, seeded("needs so")),
        basis="spin-orbital",
        notation="physicist",
        antisymmetrize=True,
    )
    assert done.hamiltonian.two_electron.antisymmetrized is True


@pytest.mark.parametrize(
    ("request_", "match"),
    [
        ({"notation": "chemist"}, r"cannot be\s+recovered"),
        ({"basis": "restricted"}, r"cannot be\s+recovered"),
        ({"basis": "unrestricted", "allow_loss": True}, r"cannot be\s+recovered"),
    ],
)
def test_undoing_antisymmetrization_is_refused_even_when_forced(request_, match):
    anti = antisymmetrize(generic_spin_orbital(4, seeded("undo"), notation="physicist")).hamiltonian
    with pytest.raises(RefusedError, match=match) as caught:
        convert(anti, **request_)
    assert caught.value.field == "two_electron.antisymmetrized"


def test_an_antisymmetrized_file_can_still_change_layout_exactly():
    anti = antisymmetrize(generic_spin_orbital(4, seeded("anti layout"), notation="physicist")).hamiltonian
    back = convert_spin_layout(convert_spin_layout(anti, "blocked").hamiltonian, "interleaved").hamiltonian
    assert back.two_electron.antisymmetrized is True
    assert same_bits(back.two_electron.array, anti.two_electron.array)


def test_a_spin_layout_without_the_spin_orbital_basis_is_a_usage_error():
    with pytest.raises(FieldError, match=r"spin-orbital files only.*add basis='spin-orbital'"):
        convert(restricted(2, seeded("layout")), spin_layout="blocked")


def test_the_fused_index_change_holds_one_output_copy_at_a_time():
    m = 32
    rng = seeded("memory so")
    low = rng.standard_normal((m * (m + 1) // 2, 3))
    so = Hamiltonian(
        Orbitals(m, "spin-orbital", spin_layout="interleaved"),
        Electrons(2, 2),
        0.0,
        np.eye(m),
        TwoElectron(unpack_pairs(low @ low.T, m), notation="chemist"),
    )
    nbytes = so.two_electron.array.nbytes
    tracemalloc.start()
    try:
        tracemalloc.reset_peak()
        before = tracemalloc.get_traced_memory()[0]
        result = convert(so, spin_layout="blocked", notation="physicist", antisymmetrize=True)
        peak = tracemalloc.get_traced_memory()[1] - before
    finally:
        tracemalloc.stop()
    del result
    # the input plus one output: the extra peak is one array and small temporaries
    assert peak < 1.25 * nbytes, f"peak {peak} bytes for a {nbytes}-byte array"


def test_antisymmetrizing_a_freshly_built_spin_orbital_array_overwrites_it_in_place():
    n = 8
    rng = seeded("memory embed")
    low = rng.standard_normal((n * (n + 1) // 2, 3))
    ham = Hamiltonian(
        Orbitals(n, "restricted"),
        Electrons(2, 2),
        0.0,
        np.eye(n),
        TwoElectron(unpack_pairs(low @ low.T, n), notation="chemist"),
    )
    so_bytes = ham.two_electron.array.nbytes * 16
    tracemalloc.start()
    try:
        tracemalloc.reset_peak()
        before = tracemalloc.get_traced_memory()[0]
        result = convert(ham, basis="spin-orbital", notation="physicist", antisymmetrize=True)
        peak = tracemalloc.get_traced_memory()[1] - before
    finally:
        tracemalloc.stop()
    loops = antisymmetrized_of(physicist_of(embedded(ham, "interleaved")[1]))
    assert same_bits(result.hamiltonian.two_electron.array, loops)
    assert peak < 1.25 * so_bytes, f"peak {peak} bytes for a {so_bytes}-byte spin-orbital array"


def test_the_in_place_antisymmetrization_reports_an_unchanged_fingerprint_for_zero_integrals():
    ham = Hamiltonian(
        Orbitals(2, "restricted"),
        Electrons(1, 1),
        0.0,
        np.eye(2),
        TwoElectron(np.zeros((2, 2, 2, 2)), notation="chemist"),
    )
    result = convert(ham, basis="spin-orbital", notation="physicist", antisymmetrize=True)
    assert [s["fingerprint_changed"] for s in result.steps] == [True, False, False]
