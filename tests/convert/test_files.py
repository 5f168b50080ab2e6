"""File conversions: HDF5 <-> JSON by extension, never onto the input, never laundering a file."""

from __future__ import annotations

import os

import h5py
import numpy as np
import pytest
from builders import (
    PROPERTY_SETTINGS,
    generic_spin_orbital,
    restricted,
    same_bits,
    seeded,
    unrestricted,
)
from hypothesis import given
from hypothesis import strategies as st

from integrity.convert import convert_file
from integrity.errors import FieldError, OverwriteError, RefusedError
from integrity.io import load, save
from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import TwoElectron

BUILDERS = {
    "restricted": lambda rng, c: restricted(3, rng, is_complex=c),
    "unrestricted": lambda rng, c: unrestricted(2, rng, is_complex=c),
    "spin-orbital": lambda rng, c: generic_spin_orbital(4, rng, is_complex=c),
}


@pytest.fixture
def saved(tmp_path):
    ham = restricted(3, seeded("saved"))
    path = tmp_path / "in.h5"
    save(ham, path)
    return ham, path


@pytest.mark.slow
@PROPERTY_SETTINGS
@given(
    basis=st.sampled_from(sorted(BUILDERS)),
    is_complex=st.booleans(),
    seed=st.integers(0, 2**32 - 1),
    first=st.sampled_from([".h5", ".json"]),
)
def test_hdf5_to_json_and_back_is_bit_exact_and_keeps_the_fingerprint(tmp_path_factory, basis, is_complex, seed, first):
    folder = tmp_path_factory.mktemp("containers")
    ham = BUILDERS[basis](np.random.default_rng(seed), is_complex)
    second = ".json" if first == ".h5" else ".h5"
    save(ham, folder / f"a{first}")
    there = convert_file(folder / f"a{first}", folder / f"b{second}")
    convert_file(folder / f"b{second}", folder / f"c{first}")
    back = load(folder / f"c{first}")
    assert same_bits(back.one_electron, ham.one_electron)
    assert same_bits(back.two_electron.array, ham.two_electron.array)
    assert back.checksum == fingerprint(ham) == there.hamiltonian.checksum
    assert [s["step"] for s in back.provenance["history"]] == ["container", "container"]
    assert not there.fingerprint_changed


def test_the_checksum_written_is_the_fingerprint_of_what_was_written(saved, tmp_path):
    _, path = saved
    result = convert_file(path, tmp_path / "out.json", basis="spin-orbital", spin_layout="blocked")
    written = load(tmp_path / "out.json")
    assert written.checksum == fingerprint(written) == result.hamiltonian.checksum
    assert [s["step"] for s in written.provenance["history"]] == ["basis", "container"]
    assert written.provenance["producer"] == "tests/convert"


def test_a_notation_only_file_conversion_keeps_the_checksum(saved, tmp_path):
    ham, path = saved
    convert_file(path, tmp_path / "phys.h5", notation="physicist")
    assert load(tmp_path / "phys.h5").checksum == load(path).checksum == fingerprint(ham)


@pytest.mark.parametrize("alias", ["same", "relative", "symlink", "hardlink"])
def test_a_conversion_never_writes_onto_its_input_even_with_overwrite(saved, tmp_path, alias):
    _, path = saved
    before = path.read_bytes()
    if alias == "same":
        out = path
    elif alias == "relative":
        (tmp_path / "sub").mkdir()
        out = tmp_path / "sub" / ".." / "in.h5"
    elif alias == "symlink":
        out = tmp_path / "link.h5"
        out.symlink_to(path)
    else:
        out = tmp_path / "hard.h5"
        os.link(path, out)
    with pytest.raises(RefusedError, match=r"is the input file .*never overwrites its input"):
        convert_file(path, out, notation="physicist", overwrite=True, accept_checksum_mismatch=True)
    assert path.read_bytes() == before


def test_an_existing_output_is_kept_unless_overwriting_is_asked_for(saved, tmp_path):
    _, path = saved
    out = tmp_path / "out.json"
    out.write_text("{}")
    with pytest.raises(OverwriteError):
        convert_file(path, out, notation="physicist")
    assert out.read_text() == "{}"
    convert_file(path, out, notation="physicist", overwrite=True)
    assert load(out).two_electron.notation == "physicist"


def _damage(path):
    with h5py.File(path, "r+") as f:
        f["one_electron"][0, 0] += 1e-3


def test_a_file_whose_checksum_does_not_match_is_refused_naming_both_fingerprints(saved, tmp_path):
    ham, path = saved
    _damage(path)
    damaged = fingerprint(load(path))
    with pytest.raises(RefusedError) as caught:
        convert_file(path, tmp_path / "out.json")
    message = str(caught.value)
    assert caught.value.field == "checksum" and str(path) in message
    assert fingerprint(ham) in message and damaged in message and "--accept-checksum-mismatch" in message
    assert not (tmp_path / "out.json").exists()


def test_a_forced_conversion_of_a_damaged_file_records_the_mismatch(saved, tmp_path):
    ham, path = saved
    _damage(path)
    result = convert_file(path, tmp_path / "out.json", accept_checksum_mismatch=True)
    entry = result.steps[0]
    assert (entry["step"], entry["from"], entry["accepted_mismatch"]) == (
        "checksum",
        fingerprint(ham),
        True,
    )
    written = load(tmp_path / "out.json")
    assert written.checksum == fingerprint(written) == entry["to"]


def test_json_refuses_nan_naming_the_element(tmp_path):
    ham = restricted(2, seeded("nan"), irreps=False).replace(references=())
    chem = ham.two_electron.array.copy()
    chem[1, 0, 1, 1] = np.nan
    save(ham.replace(two_electron=TwoElectron(chem, notation="chemist")), tmp_path / "nan.h5")
    with pytest.raises(FieldError, match=r"two_electron\[1, 1, 0, 1\].*is nan.*JSON has no NaN"):
        convert_file(tmp_path / "nan.h5", tmp_path / "nan.json", notation="physicist")
    assert not (tmp_path / "nan.json").exists()


def test_a_refused_step_names_the_input_file(tmp_path):
    save(generic_spin_orbital(4, seeded("refused")), tmp_path / "so.h5")
    with pytest.raises(RefusedError) as caught:
        convert_file(tmp_path / "so.h5", tmp_path / "r.h5", basis="restricted")
    assert str(caught.value).startswith(str(tmp_path / "so.h5"))
