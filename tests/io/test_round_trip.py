"""HDF5 -> JSON -> HDF5 is bit-exact (docs/format.md, JSON container)."""

from __future__ import annotations

import json
import tempfile
from pathlib import Path

import h5py
import numpy as np
import pytest
from hypothesis import given
from plain_format import (
    FILE_SETTINGS,
    SPECIAL_FLOATS,
    assert_same_bits,
    assert_same_hamiltonian,
    float_bits,
    hamiltonians,
)

from integrity.errors import FieldError, IntegrityError
from integrity.io import load, save
from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, Reference, TwoElectron


def _round_trip(ham: Hamiltonian, folder: Path, **hdf5_options) -> None:
    """ham -> a.h5 -> b.json -> c.h5 -> d.json; every file reads back as ham."""
    expected = ham.replace(checksum=fingerprint(ham))
    save(ham, folder / "a.h5", **hdf5_options)
    first = load(folder / "a.h5")
    save(first, folder / "b.json")
    second = load(folder / "b.json")
    save(second, folder / "c.h5")
    third = load(folder / "c.h5")
    for again in (first, second, third):
        assert_same_hamiltonian(again, expected)
    with h5py.File(folder / "c.h5", "r") as handle:
        assert handle["one_electron"].dtype == np.asarray(ham.one_electron).dtype
        assert handle["two_electron"].dtype == np.asarray(ham.two_electron.array).dtype
    save(third, folder / "d.json")
    assert (folder / "d.json").read_bytes() == (folder / "b.json").read_bytes()


@pytest.mark.slow
@FILE_SETTINGS
@given(hamiltonians())
def test_any_hamiltonian_survives_hdf5_json_hdf5_bit_for_bit(ham):
    with tempfile.TemporaryDirectory() as folder:
        _round_trip(ham, Path(folder))


@pytest.mark.slow
@FILE_SETTINGS
@given(hamiltonians(optional=True))
def test_a_hamiltonian_with_every_optional_field_survives_the_round_trip(ham):
    with tempfile.TemporaryDirectory() as folder:
        _round_trip(ham, Path(folder))


@pytest.mark.slow
@FILE_SETTINGS
@given(hamiltonians(optional=False))
def test_a_hamiltonian_without_optional_fields_gains_none_in_the_round_trip(ham):
    with tempfile.TemporaryDirectory() as folder:
        _round_trip(ham, Path(folder))
        again = load(Path(folder) / "c.h5")
    assert again.title is None and again.provenance is None and again.core_energy_parts is None
    assert again.references == ()
    assert again.orbitals.point_group is None and again.orbitals.irreps is None
    assert again.orbitals.canonical is None


@pytest.mark.parametrize(
    "options",
    [
        {"compression": "gzip"},
        {"compression": "gzip", "compression_opts": 9, "chunks": True},
        {"compression": "lzf"},
        {"compression": "lzf", "chunks": True},
        {"chunks": True},
    ],
    ids=["gzip", "gzip-9-chunked", "lzf", "lzf-chunked", "chunked"],
)
@pytest.mark.slow
@FILE_SETTINGS
@given(ham=hamiltonians(sizes=(3, 4, 5)))
def test_compressed_and_chunked_hdf5_reads_back_the_same_values(options, ham):
    with tempfile.TemporaryDirectory() as folder:
        _round_trip(ham, Path(folder), **options)
        with h5py.File(Path(folder) / "a.h5", "r") as handle:
            dataset = handle["two_electron"]
            assert dataset.chunks is not None
            assert dataset.compression == options.get("compression")


def _with_one_electron(values: np.ndarray) -> Hamiltonian:
    n = values.shape[0]
    return Hamiltonian(
        orbitals=Orbitals(count=n, basis="restricted"),
        electrons=Electrons(1, 0),
        core_energy=-0.0,
        one_electron=values,
        two_electron=TwoElectron(np.zeros((n, n, n, n)), notation="chemist"),
    )


def test_signed_zeros_subnormals_extremes_and_17_digit_values_survive_json_text(tmp_path):
    size = int(np.ceil(np.sqrt(len(SPECIAL_FLOATS))))
    values = np.resize(np.array(SPECIAL_FLOATS), size * size).reshape(size, size)
    ham = _with_one_electron(values)
    save(ham, tmp_path / "a.json")
    again = load(tmp_path / "a.json")
    assert_same_bits(again.one_electron, values, "one_electron")
    assert float_bits(again.core_energy) == float_bits(-0.0)
    assert np.signbit(again.core_energy)


def test_json_numbers_are_written_in_their_shortest_round_trip_form(tmp_path, rng):
    values = rng.standard_normal((4, 4)) * 10.0 ** rng.integers(-300, 300, size=(4, 4))
    values.flat[: len(SPECIAL_FLOATS)] = SPECIAL_FLOATS
    save(_with_one_electron(values), tmp_path / "a.json")
    tokens = json.loads((tmp_path / "a.json").read_text(), parse_float=str, parse_int=str)
    written = tokens["one_electron"]["data"]
    for token, value in zip(written, values.ravel(), strict=True):
        assert float_bits(float(token)) == float_bits(value)
        assert token == repr(float(value)), f"{token} is not the shortest form {float(value)!r}"


@pytest.mark.parametrize("bad", [np.nan, np.inf, -np.inf])
def test_the_json_writer_refuses_nan_and_infinities_naming_the_element(tmp_path, rng, bad):
    values = rng.standard_normal((2, 2))
    values[1, 0] = bad
    with pytest.raises(FieldError) as caught:
        save(_with_one_electron(values), tmp_path / "a.json")
    assert "one_electron[1, 0]" in str(caught.value)
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize(
    "name",
    [
        "a.h5",
        "a.json",
    ],
)
def test_a_complex_array_keeps_its_negative_zeros(tmp_path, name):
    values = np.empty((2, 2), dtype=np.complex128)
    values.real = [[1.0, -0.0], [-0.0, 2.0]]
    values.imag = [[-0.0, -0.0], [5e-324, -0.0]]
    save(_with_one_electron(values), tmp_path / name)
    again = load(tmp_path / name)
    assert again.one_electron.dtype == np.complex128
    assert_same_bits(again.one_electron, values, name)
    assert np.signbit(again.one_electron.imag[0, 0])
    assert np.signbit(again.one_electron.real[1, 0])


def _small(**fields) -> Hamiltonian:
    values = {
        "orbitals": Orbitals(count=1, basis="restricted"),
        "electrons": Electrons(1, 0),
        "core_energy": 0.25,
        "one_electron": np.array([[-0.5]]),
        "two_electron": TwoElectron(np.array([[[[0.75]]]]), notation="chemist"),
    }
    return Hamiltonian(**(values | fields))


@pytest.mark.parametrize(
    ("case", "container"),
    [
        ("label with a slash", "h5"),
        ("label with a slash", "json"),
        ("label dot", "h5"),
        ("label dot", "json"),
        ("title with NUL", "h5"),
        ("title with NUL", "json"),
        ("history as a string", "h5"),
        ("history as a string", "json"),
        ("provenance object value", "h5"),
        ("provenance object value", "json"),
        ("provenance list value", "h5"),
        ("provenance list value", "json"),
    ],
)
def test_what_the_model_accepts_is_saved_and_read_back_or_refused_with_an_integrity_error(tmp_path, case, container):
    fields = {
        "label with a slash": {"references": (Reference("a/b", "hf", -1.0),)},
        "label dot": {"references": (Reference(".", "hf", -1.0),)},
        "title with NUL": {"title": "H2\x00 test"},
        "history as a string": {"provenance": {"history": "converted"}},
        "provenance object value": {"provenance": {"options": {"tight": True}}},
        "provenance list value": {"provenance": {"steps": [1, 2]}},
    }[case]
    try:
        ham = _small(**fields)
    except IntegrityError:
        return  # the model refusing is a fine answer too
    path = tmp_path / f"h.{container}"
    try:
        save(ham, path)
    except IntegrityError:
        assert not path.exists()
        return
    assert_same_hamiltonian(load(path), ham.replace(checksum=fingerprint(ham)))


@pytest.mark.parametrize("container", ["h5", "json"])
def test_provenance_history_steps_given_as_text_come_back_as_the_same_text(tmp_path, container):
    steps = ["converted to physicist", "1", "[1, 2]", "null", '"quoted"']
    ham = _small(provenance={"history": steps})
    save(ham, tmp_path / f"h.{container}")
    assert load(tmp_path / f"h.{container}").provenance["history"] == steps


@pytest.mark.parametrize("container", ["h5", "json"])
@pytest.mark.parametrize(
    "fields",
    [
        pytest.param({"orbitals": Orbitals(count=np.int64(1), basis="restricted")}, id="count"),
        pytest.param(
            {"references": (Reference("hf", "hf", -1.0, two_s=np.int64(0), root=np.int64(0)),)}, id="two_s and root"
        ),
        pytest.param(
            {"references": (Reference("hf", "hf", -1.0, occupation=(tuple(np.flatnonzero([1])), ())),)},
            id="occupation from numpy",
        ),
        pytest.param(
            {"references": (Reference("hf", "hf", -1.0, electrons=Electrons(np.int64(1), 0)),)},
            id="reference electrons",
        ),
        pytest.param({"references": (Reference("hf", "hf", np.float32(-1.5)),)}, id="float32 energy"),
        pytest.param({"provenance": {"frozen_core_orbitals": np.int64(2)}}, id="provenance integer"),
    ],
)
def test_numpy_scalars_the_model_accepts_are_saved_as_plain_numbers(tmp_path, container, fields):
    ham = _small(**fields)
    save(ham, tmp_path / f"h.{container}")
    again = load(tmp_path / f"h.{container}")
    assert fingerprint(again) == fingerprint(ham)
    assert [float(r.energy) for r in again.references] == [float(r.energy) for r in ham.references]
