"""Files written by other groups' code, following docs/format.md with plain h5py and json, load.

The writers are in plain_format (``write_plain_hdf5``, ``write_plain_json``);
nothing here uses integrity's own writer.
"""

from __future__ import annotations

import dataclasses
import json
import tempfile
from pathlib import Path

import h5py
import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from plain_format import (
    FILE_SETTINGS,
    allowed_storages,
    assert_same_bits,
    assert_same_hamiltonian,
    hamiltonian_from_tree,
    json_document,
    random_tree,
    write_plain_hdf5,
    write_plain_json,
)

from integrity.io import load


def _expected(tree: dict, *, sorted_references: bool = False):
    ham = hamiltonian_from_tree(tree)
    if sorted_references:
        # HDF5 lists the members of a group without creation order by name
        ham = dataclasses.replace(ham, references=tuple(sorted(ham.references, key=lambda r: r.label)))
    return ham


def _expected_h5(tree: dict):
    """What a file written by write_plain_hdf5 without track_order must load as."""
    return _expected(tree, sorted_references=True)


@st.composite
def trees(draw):
    basis = draw(st.sampled_from(["restricted", "unrestricted", "spin-orbital"]))
    n = draw(st.sampled_from([2, 4] if basis == "spin-orbital" else [1, 2, 3, 4, 5]))
    is_complex = draw(st.booleans())
    notation = draw(st.sampled_from(["chemist", "physicist"]))
    storage = draw(st.sampled_from(allowed_storages(basis, notation, is_complex)))
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    tree = random_tree(
        rng, basis=basis, n=n, notation=notation, storage=storage, is_complex=is_complex, optional=draw(st.booleans())
    )
    if basis == "spin-orbital":
        tree["orbitals"]["spin_layout"] = draw(st.sampled_from(["interleaved", "blocked"]))
        if notation == "physicist" and draw(st.booleans()):
            tree["two_electron"]["antisymmetrized"] = True
    return tree


hdf5_styles = st.fixed_dictionaries(
    {
        "strings": st.sampled_from(["vlen", "fixed"]),
        "booleans": st.sampled_from(["int", "bool"]),
        "complex_style": st.sampled_from(["native", "compound"]),
        "byteorder": st.sampled_from(["<", ">"]),
        "compression": st.sampled_from([None, "gzip", "lzf"]),
        "track_order": st.sampled_from([None, True]),
    }
)


@pytest.mark.slow
@FILE_SETTINGS
@given(trees(), hdf5_styles)
def test_any_file_written_with_plain_h5py_loads_with_every_value_intact(tree, style):
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "foreign.h5"
        write_plain_hdf5(tree, path, **style)
        ham = load(path)
    expected = _expected(tree, sorted_references=style["track_order"] is None)
    assert_same_hamiltonian(ham, expected)


@FILE_SETTINGS
@given(trees())
def test_any_file_written_with_plain_json_loads_with_every_value_intact(tree):
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "foreign.json"
        write_plain_json(tree, path)
        ham = load(path)
    assert_same_hamiltonian(ham, _expected(tree))


def _attribute_types(path: Path) -> set:
    types = set()

    def visit(_, obj):
        types.update(type(v) for v in obj.attrs.values())

    with h5py.File(path, "r") as handle:
        visit("/", handle)
        handle.visititems(visit)
    return types


@pytest.mark.parametrize("strings", ["fixed", "vlen"])
def test_text_attributes_stored_fixed_length_or_variable_length_are_read_as_text(tmp_path, rng, strings):
    tree = random_tree(rng)
    write_plain_hdf5(tree, tmp_path / "h.h5", strings=strings)
    stored = _attribute_types(tmp_path / "h.h5")
    assert (np.bytes_ in stored) == (strings == "fixed")
    ham = load(tmp_path / "h.h5")
    assert ham.title == tree["title"] and ham.orbitals.basis == "restricted"
    assert ham.two_electron.notation == "chemist"
    assert ham.reference("hf").method == "hf"
    assert ham.provenance["producer"] == "foundation tests"
    assert_same_hamiltonian(ham, _expected_h5(tree))


def test_booleans_stored_as_integers_0_and_1_are_read_as_booleans(tmp_path, rng):
    tree = random_tree(rng, basis="spin-orbital", n=2, notation="physicist")
    tree["two_electron"]["antisymmetrized"] = True
    tree["orbitals"]["canonical"] = False
    write_plain_hdf5(tree, tmp_path / "h.h5", booleans="int")
    with h5py.File(tmp_path / "h.h5", "r") as handle:
        assert handle["orbitals"].attrs["canonical"].dtype == np.int8
        assert handle["two_electron"].attrs["antisymmetrized"].dtype == np.int8
    ham = load(tmp_path / "h.h5")
    assert ham.two_electron.antisymmetrized is True
    assert ham.orbitals.canonical is False


@pytest.mark.parametrize("style", ["compound", "native"])
@pytest.mark.parametrize("byteorder", ["<", ">"])
def test_complex_data_as_a_real_imag_compound_or_h5py_complex_is_read_as_complex128(tmp_path, rng, style, byteorder):
    tree = random_tree(rng, n=3, is_complex=True)
    write_plain_hdf5(tree, tmp_path / "h.h5", complex_style=style, byteorder=byteorder)
    with h5py.File(tmp_path / "h.h5", "r") as handle:
        stored = handle["two_electron"].dtype
        if style == "compound":
            assert stored.names == ("real", "imag")
        else:
            assert stored.kind == "c"
    ham = load(tmp_path / "h.h5")
    assert ham.two_electron.array.dtype == np.complex128
    assert_same_bits(ham.two_electron.array, tree["two_electron"]["array"], "two_electron")
    assert_same_bits(ham.one_electron, tree["one_electron"], "one_electron")


def test_big_endian_datasets_and_attributes_load_to_the_same_values(tmp_path, rng):
    tree = random_tree(rng, n=4)
    write_plain_hdf5(tree, tmp_path / "h.h5", byteorder=">")
    with h5py.File(tmp_path / "h.h5", "r") as handle:
        assert handle["two_electron"].dtype == np.dtype(">f8")
        assert handle.attrs.get_id("core_energy").dtype == np.dtype(">f8")
    ham = load(tmp_path / "h.h5")
    assert ham.two_electron.array.dtype == np.float64
    assert_same_bits(ham.two_electron.array, tree["two_electron"]["array"], "two_electron")
    assert_same_hamiltonian(ham, _expected_h5(tree))


@pytest.mark.parametrize("compression", ["gzip", "lzf"])
def test_gzip_and_lzf_chunked_datasets_load(tmp_path, rng, compression):
    tree = random_tree(rng, n=5)
    write_plain_hdf5(tree, tmp_path / "h.h5", compression=compression)
    with h5py.File(tmp_path / "h.h5", "r") as handle:
        assert handle["two_electron"].compression == compression
        assert handle["two_electron"].chunks is not None
    assert_same_hamiltonian(load(tmp_path / "h.h5"), _expected_h5(tree))


def test_gzip_with_shuffle_and_checksummed_chunks_loads(tmp_path, rng):
    tree = random_tree(rng, n=4)
    write_plain_hdf5(tree, tmp_path / "h.h5")
    with h5py.File(tmp_path / "h.h5", "r+") as handle:
        for name in ("one_electron", "two_electron"):
            data, attrs = handle[name][()], dict(handle[name].attrs)
            del handle[name]
            dataset = handle.create_dataset(
                name, data=data, chunks=(1,) * (data.ndim - 1) + (2,), compression="gzip", shuffle=True, fletcher32=True
            )
            dataset.attrs.update(attrs)
    assert_same_hamiltonian(load(tmp_path / "h.h5"), _expected_h5(tree))


def test_groups_created_without_creation_order_load_with_references_in_name_order(tmp_path, rng):
    tree = random_tree(rng)
    tree["references"].append({"label": "casci", "method": "casci", "energy": -1.25})
    write_plain_hdf5(tree, tmp_path / "h.h5", track_order=None)
    ham = load(tmp_path / "h.h5")
    assert [r.label for r in ham.references] == ["casci", "fci", "hf"]
    assert_same_hamiltonian(ham, _expected(tree, sorted_references=True))


def test_references_as_subgroups_keep_every_optional_field(tmp_path, rng):
    tree = random_tree(rng, n=3)
    tree["references"] = [
        {
            "label": "excited",
            "method": "fci",
            "energy": -2.5,
            "electrons": {"alpha": 2, "beta": 1},
            "two_s": 1,
            "irrep": 3,
            "root": 2,
            "occupation": {"alpha": [0, 2], "beta": [1]},
            "tolerance": 1e-7,
        }
    ]
    write_plain_hdf5(tree, tmp_path / "h.h5")
    with h5py.File(tmp_path / "h.h5", "r") as handle:
        assert set(handle["references/excited"]) == {"electrons", "occupation"}
    (ref,) = load(tmp_path / "h.h5").references
    assert (ref.label, ref.method, ref.energy) == ("excited", "fci", -2.5)
    assert (ref.electrons.alpha, ref.electrons.beta, ref.two_s, ref.irrep, ref.root) == (2, 1, 1, 3, 2)
    assert ref.occupation == ((0, 2), (1,))
    assert ref.tolerance == 1e-7


@pytest.mark.parametrize("strings", ["fixed", "vlen"])
def test_provenance_history_as_a_dataset_of_json_strings_is_read_as_its_steps(tmp_path, rng, strings):
    tree = random_tree(rng)
    steps = [
        {"step": "convert", "to": "physicist"},
        {"step": "pack", "storage": "pairs", "tolerance": 1e-12, "forced": False},
    ]
    tree["provenance"]["history"] = steps
    write_plain_hdf5(tree, tmp_path / "h.h5", strings=strings)
    with h5py.File(tmp_path / "h.h5", "r") as handle:
        assert handle["provenance/history"].shape == (2,)
    assert load(tmp_path / "h.h5").provenance["history"] == steps


def test_json_irreps_and_occupations_as_plain_lists_or_integer_arrays_load(tmp_path, rng):
    tree = random_tree(rng, n=3)
    doc = json_document(tree)
    write_plain_json(doc, tmp_path / "lists.json", encoded=True)
    doc["orbitals"]["irreps"] = {"shape": [3], "data": tree["orbitals"]["irreps"]}
    doc["references"][0]["occupation"] = {"alpha": {"shape": [1], "data": [0]}, "beta": {"shape": [1], "data": [0]}}
    write_plain_json(doc, tmp_path / "arrays.json", encoded=True)
    lists, arrays = load(tmp_path / "lists.json"), load(tmp_path / "arrays.json")
    for ham in (lists, arrays):
        assert ham.orbitals.irreps == tuple(tree["orbitals"]["irreps"])
        assert ham.references[0].occupation == ((0,), (0,))
    assert_same_hamiltonian(lists, _expected(tree))


def test_json_complex_arrays_as_real_and_imag_lists_load_as_complex128(tmp_path, rng):
    tree = random_tree(rng, n=3, is_complex=True)
    doc = json_document(tree)
    assert set(doc["two_electron"]) >= {"real", "imag"} and "data" not in doc["two_electron"]
    write_plain_json(doc, tmp_path / "h.json", encoded=True)
    ham = load(tmp_path / "h.json")
    assert ham.one_electron.dtype == ham.two_electron.array.dtype == np.complex128
    assert_same_hamiltonian(ham, _expected(tree))


def test_json_history_steps_written_as_json_strings_are_read_as_objects(tmp_path, rng):
    tree = random_tree(rng)
    doc = json_document(tree)
    doc["provenance"]["history"] = [json.dumps(step) for step in tree["provenance"]["history"]]
    write_plain_json(doc, tmp_path / "h.json", encoded=True)
    assert load(tmp_path / "h.json").provenance["history"] == tree["provenance"]["history"]


def test_a_json_file_with_keys_in_any_order_and_any_layout_loads(tmp_path, rng):
    tree = random_tree(rng, n=2)
    doc = json_document(tree)
    shuffled = {key: doc[key] for key in sorted(doc, reverse=True)}
    (tmp_path / "h.json").write_text(json.dumps(shuffled, separators=(",", ":")))
    assert_same_hamiltonian(load(tmp_path / "h.json"), _expected(tree))
