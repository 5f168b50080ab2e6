"""The fingerprint names the Hamiltonian: one value across containers, notations and storages."""

from __future__ import annotations

import json
import tempfile
from pathlib import Path

import numpy as np
import pytest
from doubles import MeteredArray
from hypothesis import given
from hypothesis import strategies as st
from plain_format import (
    FILE_SETTINGS,
    dense_from_pairs_slow,
    hamiltonians,
    n_pairs,
    random_values,
    recipe_fingerprint,
    unique_from_pairs_slow,
)

from integrity.io import hamiltonian_of, load, open_document, save
from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, Reference, TwoElectron
from integrity.model.slabs import slab_budget


@pytest.mark.slow
@FILE_SETTINGS
@given(hamiltonians())
def test_an_independent_implementation_of_the_recipe_agrees_with_integrity(ham):
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "h.json"
        save(ham, path)
        expected = recipe_fingerprint(path)
        assert fingerprint(ham) == expected
        assert json.loads(path.read_text())["checksum"] == expected
        assert fingerprint(load(path)) == expected


# ---------------------------------------------------------------- one Hamiltonian, many forms


def _physicist(chem: np.ndarray) -> np.ndarray:
    """<pq|rs> = (pr|qs): swap the middle two of the last four axes (a copy)."""
    axes = list(range(chem.ndim))
    axes[-3], axes[-2] = axes[-2], axes[-3]
    return chem.transpose(axes).copy()


@st.composite
def symmetric_forms(draw):
    """One real Hamiltonian with the pair symmetry packed storage assumes, in every storage."""
    basis = draw(st.sampled_from(["restricted", "unrestricted", "spin-orbital"]))
    n = draw(st.sampled_from([2, 4] if basis == "spin-orbital" else [1, 2, 3, 4, 5]))
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    npair = n_pairs(n)
    blocks = []
    for b in range(3 if basis == "unrestricted" else 1):
        pairs = random_values(rng, (npair, npair))
        if b != 1:  # the ab block of an unrestricted file has no pair-swap symmetry
            pairs = np.tril(pairs) + np.tril(pairs, -1).T
        blocks.append(pairs)
    stack = (lambda bs: np.stack(bs)) if basis == "unrestricted" else (lambda bs: bs[0])
    chem = stack([dense_from_pairs_slow(p, n) for p in blocks])
    forms = {
        ("chemist", "dense"): chem,
        ("physicist", "dense"): _physicist(chem),
        ("chemist", "pairs"): stack(blocks),
    }
    if basis != "unrestricted":
        forms[("chemist", "unique")] = unique_from_pairs_slow(blocks[0])
    layout = draw(st.sampled_from(["interleaved", "blocked"])) if basis == "spin-orbital" else None
    one = random_values(rng, (2, n, n) if basis == "unrestricted" else (n, n))
    core_energy = float(rng.standard_normal())
    hams = [
        Hamiltonian(
            orbitals=Orbitals(count=n, basis=basis, spin_layout=layout),
            electrons=Electrons(1, 0),
            core_energy=core_energy,
            one_electron=one,
            two_electron=TwoElectron(array, notation=notation, storage=storage),
        )
        for (notation, storage), array in forms.items()
    ]
    return hams


@pytest.mark.slow
@FILE_SETTINGS
@given(symmetric_forms())
def test_one_hamiltonian_has_one_fingerprint_in_every_container_notation_and_storage(hams):
    expected = fingerprint(hams[0])
    with tempfile.TemporaryDirectory() as folder:
        for i, ham in enumerate(hams):
            assert fingerprint(ham) == expected, (ham.two_electron.notation, ham.two_electron.storage)
            for suffix in (".h5", ".json"):
                path = Path(folder) / f"{i}{suffix}"
                save(ham, path)
                again = load(path)
                assert again.checksum == expected
                assert fingerprint(again) == expected


@FILE_SETTINGS
@given(st.integers(0, 2**32 - 1), st.sampled_from([1, 2, 3, 4]))
def test_complex_chemist_and_physicist_arrays_of_one_hamiltonian_share_a_fingerprint(seed, n):
    rng = np.random.default_rng(seed)
    chem = random_values(rng, (n, n, n, n), is_complex=True)
    base = Hamiltonian(
        orbitals=Orbitals(count=n, basis="restricted"),
        electrons=Electrons(1, 1),
        core_energy=0.5,
        one_electron=random_values(rng, (n, n), is_complex=True),
        two_electron=TwoElectron(chem, notation="chemist"),
    )
    other = base.replace(two_electron=TwoElectron(_physicist(chem), notation="physicist"))
    assert fingerprint(other) == fingerprint(base)


@pytest.mark.slow
@FILE_SETTINGS
@given(hamiltonians(sizes=(2, 3, 4)), st.integers(1, 4096))
def test_a_file_fingerprinted_slab_by_slab_from_disk_gives_the_in_memory_value(ham, slab_bytes):
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "h.h5"
        save(ham, path)
        with slab_budget(slab_bytes), open_document(path, lazy=True) as document:
            lazy = hamiltonian_of(document)
            assert not isinstance(lazy.two_electron.array, np.ndarray)
            assert fingerprint(lazy) == fingerprint(ham)


# ---------------------------------------------------------------- what is and is not in it


def _base(rng) -> Hamiltonian:
    n = 2
    return Hamiltonian(
        orbitals=Orbitals(count=n, basis="restricted", point_group="C2v", irreps=(0, 1)),
        electrons=Electrons(1, 1),
        core_energy=float(rng.standard_normal()),
        one_electron=random_values(rng, (n, n)),
        two_electron=TwoElectron(random_values(rng, (n, n, n, n)), notation="chemist"),
    )


def _next(value):
    """The neighbouring float64, toward zero for positive values (so never overflowing)."""
    return np.nextafter(value, -np.inf if value > 0 else np.inf)


def _ulp(array: np.ndarray, index) -> np.ndarray:
    out = array.copy()
    out[index] = _next(out[index])
    return out


CHANGES = {
    "count": lambda h: h.replace(
        orbitals=Orbitals(count=3, basis="restricted"),
        one_electron=np.pad(h.one_electron, (0, 1)),
        two_electron=TwoElectron(np.pad(h.two_electron.array, (0, 1)), notation="chemist"),
    ),
    "basis": lambda h: h.replace(orbitals=Orbitals(2, "spin-orbital", spin_layout="interleaved")),
    "spin_layout": lambda h: h.replace(orbitals=Orbitals(2, "spin-orbital", spin_layout="blocked")),
    "point_group": lambda h: h.replace(orbitals=Orbitals(2, "restricted", point_group="C2h", irreps=(0, 1))),
    "point_group absent": lambda h: h.replace(orbitals=Orbitals(2, "restricted", irreps=(0, 1))),
    "irreps": lambda h: h.replace(orbitals=Orbitals(2, "restricted", point_group="C2v", irreps=(1, 0))),
    "irreps absent": lambda h: h.replace(orbitals=Orbitals(2, "restricted", point_group="C2v")),
    "electrons.alpha": lambda h: h.replace(electrons=Electrons(2, 1)),
    "electrons.beta": lambda h: h.replace(electrons=Electrons(1, 0)),
    "core_energy": lambda h: h.replace(core_energy=float(_next(h.core_energy))),
    "one_electron element": lambda h: h.replace(one_electron=_ulp(h.one_electron, (1, 0))),
    "two_electron element": lambda h: h.replace(
        two_electron=TwoElectron(_ulp(h.two_electron.array, (0, 1, 1, 0)), notation="chemist")
    ),
}


@pytest.mark.parametrize("change", sorted(CHANGES))
def test_the_fingerprint_changes_when_an_identifying_field_changes(rng, change):
    base = _base(rng)
    changed = CHANGES[change](base)
    assert fingerprint(changed) != fingerprint(base)


def test_spin_layout_is_part_of_the_fingerprint_of_a_spin_orbital_file(rng):
    base = _base(rng)
    interleaved = CHANGES["basis"](base)
    blocked = CHANGES["spin_layout"](base)
    assert fingerprint(interleaved) != fingerprint(blocked)


@pytest.mark.slow
@FILE_SETTINGS
@given(hamiltonians(), st.data())
def test_one_ulp_in_any_stored_element_changes_the_fingerprint(ham, data):
    which = data.draw(st.sampled_from(["one_electron", "two_electron"]))
    array = np.asarray(ham.one_electron if which == "one_electron" else ham.two_electron.array)
    flat = data.draw(st.integers(0, array.size - 1))
    index = np.unravel_index(flat, array.shape)
    changed_array = array.copy()
    if array.dtype.kind == "c":
        part = data.draw(st.sampled_from(["real", "imag"]))
        view = getattr(changed_array, part)
        view[index] = _next(view[index])
    else:
        changed_array[index] = _next(changed_array[index])
    if which == "one_electron":
        changed = ham.replace(one_electron=changed_array)
    else:
        two = ham.two_electron
        changed = ham.replace(
            two_electron=TwoElectron(
                changed_array,
                notation=two.notation,
                storage=two.storage,
                interaction=two.interaction,
                antisymmetrized=two.antisymmetrized,
            )
        )
    assert fingerprint(changed) != fingerprint(ham)


@pytest.mark.slow
@FILE_SETTINGS
@given(hamiltonians(), st.data())
def test_title_references_provenance_and_annotations_are_not_in_the_fingerprint(ham, data):
    orb = ham.orbitals
    two = ham.two_electron
    canonical = data.draw(st.sampled_from([None, True, False]))
    interaction = data.draw(st.sampled_from([None, "coulomb", "model"]))
    annotated = ham.replace(
        title="another title",
        references=(Reference("extra", "hf", -1.5, tolerance=1e-3),),
        provenance={"producer": "someone else", "history": [{"step": "renamed"}]},
        core_energy_parts={"nuclear_repulsion": 1.0},
        checksum="sha256:" + "0" * 64,
        orbitals=Orbitals(orb.count, orb.basis, orb.spin_layout, orb.point_group, orb.irreps, canonical),
        two_electron=TwoElectron(
            two.array,
            notation=two.notation,
            storage=two.storage,
            interaction=interaction,
            antisymmetrized=two.antisymmetrized,
        ),
    )
    assert fingerprint(annotated) == fingerprint(ham)


@given(st.integers(0, 2**32 - 1), st.sampled_from([3, 4, 5]), st.sampled_from(["chemist", "physicist"]))
def test_no_read_of_a_dense_array_exceeds_the_budget_while_a_row_of_n_squared_fits(seed, n, notation):
    rng = np.random.default_rng(seed)
    chem = random_values(rng, (n, n, n, n))
    stored = chem if notation == "chemist" else _physicist(chem)
    ham = Hamiltonian(
        orbitals=Orbitals(count=n, basis="restricted"),
        electrons=Electrons(1, 1),
        core_energy=0.0,
        one_electron=random_values(rng, (n, n)),
        two_electron=TwoElectron(stored, notation=notation),
    )
    expected = fingerprint(ham)
    budget = n * n * 8 * 2  # two q-columns of one first-index row: less than one row (n^3 values)
    metered = MeteredArray(stored)
    lazy = ham.replace(two_electron=TwoElectron(metered, notation=notation))
    with slab_budget(budget):
        assert fingerprint(lazy) == expected
    assert metered.reads and max(metered.reads) <= budget
