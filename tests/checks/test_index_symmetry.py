"""Property-based: valid Hamiltonians pass; a single altered element is caught and located."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from integrity.checks import check
from integrity.checks.relations import orbit, relations_for
from integrity.energies.meanfield import default_occupation, determinant_energy
from integrity.model.hamiltonian import Reference, TwoElectron
from integrity.testing.hamiltonians import random_hamiltonian

SYMMETRY = ["two_electron.symmetry"]
bases = st.sampled_from(["restricted", "unrestricted"])


@settings(max_examples=40, deadline=None)
@given(basis=bases, n=st.integers(1, 5), complex_values=st.booleans(), seed=st.integers(0, 10**6))
def test_random_valid_hamiltonians_pass_every_check(basis, n, complex_values, seed):
    ham = random_hamiltonian(basis, n, complex_values=complex_values, seed=seed)
    report = check(ham)
    assert report.status == "pass", [(r.id, r.message) for r in report.failures]


def _perturb(ham, block, index, delta):
    array = np.array(ham.two_electron.array)
    target = array[block] if ham.basis == "unrestricted" else array
    target[index] += delta
    return ham.replace(two_electron=TwoElectron(array, notation="chemist"))


@settings(max_examples=60, deadline=None)
@given(
    basis=bases,
    n=st.integers(2, 5),
    complex_values=st.booleans(),
    seed=st.integers(0, 10**6),
    data=st.data(),
    magnitude=st.floats(1e-8, 1.0),
)
def test_one_altered_element_is_caught_and_where_points_at_it(basis, n, complex_values, seed, data, magnitude):
    ham = random_hamiltonian(basis, n, complex_values=complex_values, seed=seed)
    block = data.draw(st.sampled_from([0, 1, 2])) if basis == "unrestricted" else None
    index = tuple(data.draw(st.integers(0, n - 1)) for _ in range(4))
    relations = relations_for("chemist", complex_values, mixed_spin=block == 1)
    members = orbit(index, relations)
    delta = magnitude * (1j if complex_values and data.draw(st.booleans()) else 1.0)
    # only a change that some relation sees can be caught: (pp|pp) may change freely when real
    if not any(image != index or delta != sign * (np.conj(delta) if conj else delta) for image, sign, conj in members):
        return
    altered = _perturb(ham, block, index, delta)
    result = check(altered, only=SYMMETRY).results[0]
    assert result.status == "fail"
    label = {0: "aa", 1: "ab", 2: "bb"}.get(block)
    assert (result.where.array, result.where.block) == ("two_electron", label)
    if len(members) > 2:
        assert result.where.index == index, result.message
    else:  # two members: either one may be the odd one out
        assert result.where.index in {m for m, _, _ in members}


@settings(max_examples=30, deadline=None)
@given(n=st.integers(2, 5), seed=st.integers(0, 10**6), delta=st.floats(1e-4, 1.0))
def test_altering_a_whole_orbit_that_enters_the_determinant_energy_is_caught_by_energy_hf(n, seed, delta):
    ham = random_hamiltonian("restricted", n, seed=seed)
    occupation = default_occupation(ham, ham.electrons.alpha, ham.electrons.beta)
    ham = ham.replace(references=(Reference("hf", "hf", determinant_energy(ham, occupation)),))
    i = occupation[0][0]
    array = np.array(ham.two_electron.array)
    array[i, i, i, i] += delta  # (ii|ii): its own orbit, so every relation still holds
    altered = ham.replace(two_electron=TwoElectron(array, notation="chemist"))
    report = check(altered)
    assert {r.id for r in report.failures} == {"energy.hf"}
