"""Arrays beyond the memory budget are checked block by block, straight from HDF5."""

from __future__ import annotations

import tracemalloc

import numpy as np
import pytest

from integrity.checks import check
from integrity.energies.meanfield import default_occupation, determinant_energy
from integrity.io import open_document, save
from integrity.io.hdf5 import StoredArray
from integrity.model.hamiltonian import Reference, TwoElectron
from integrity.testing.hamiltonians import random_hamiltonian


@pytest.fixture
def large_file(tmp_path):
    ham = random_hamiltonian("restricted", 24, seed=8, alpha=3, beta=3)
    occupation = default_occupation(ham, 3, 3)
    ham = ham.replace(references=(Reference("hf", "hf", determinant_energy(ham, occupation)),))
    path = tmp_path / "large.h5"
    save(ham, path)
    return path, ham


BUDGET = 4 * 2**20  # the 24^4 array is 2.65 MB: beyond a quarter of this budget


def test_a_file_beyond_the_budget_stays_on_disk(large_file):
    path, _ = large_file
    with open_document(path, memory=BUDGET, lazy="auto") as document:
        assert isinstance(document.content["two_electron"]["array"], StoredArray)
    with open_document(path, memory=2**30, lazy="auto") as document:
        assert isinstance(document.content["two_electron"]["array"], np.ndarray)


@pytest.mark.slow
def test_block_by_block_results_equal_the_in_memory_ones(large_file):
    path, _ = large_file
    on_disk = check(path, memory=BUDGET)
    in_memory = check(path)
    assert on_disk.status == in_memory.status == "pass"
    for a, b in zip(on_disk.results, in_memory.results, strict=True):
        assert (a.id, a.status) == (b.id, b.status)
        if a.value is not None:
            assert a.value == pytest.approx(b.value, abs=1e-12)
    assert on_disk.fingerprint == in_memory.fingerprint


def test_a_fault_is_found_block_by_block_too(large_file, tmp_path):
    _, ham = large_file
    array = np.array(ham.two_electron.array)
    array[19, 4, 11, 2] += 1e-7
    path = tmp_path / "altered.h5"
    save(ham.replace(two_electron=TwoElectron(array, notation="chemist")), path)
    result = check(path, memory=BUDGET, only=["two_electron.symmetry"]).results[0]
    assert result.status == "fail"
    assert result.where.as_dict() == {"array": "two_electron", "index": [19, 4, 11, 2]}


def test_the_numpy_memory_of_a_block_by_block_check_stays_within_the_budget(large_file):
    path, _ = large_file
    tracemalloc.start()
    report = check(path, memory=BUDGET)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    assert report.status == "pass"
    assert peak < BUDGET
