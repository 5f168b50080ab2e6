"""Conversions leave the energy unchanged: reference determinants and full CI.

The energy of a determinant follows the Slater–Condon rules,
E = E_core + sum_i h_ii + 1/2 sum_ij [(ii|jj) - (ij|ji)] over occupied spin orbitals i, j,
the exchange term only between orbitals of one spin (Source: Szabo and Ostlund, *Modern
Quantum Chemistry* (1989), section 2.3 (from memory)). The test writes the rules out
element by element on the unconverted input, independently of the package, and the package's
``determinant_energy`` of every converted file must equal it.
"""

from __future__ import annotations

import numpy as np
import pytest
from builders import (
    PROPERTY_SETTINGS,
    generic_spin_orbital,
    restricted,
    seeded,
    unrestricted,
)
from hypothesis import given
from hypothesis import strategies as st

from integrity.convert import convert
from integrity.energies.meanfield import determinant_energy, reference_occupation
from integrity.model.slabs import dense_chemist

TOL = 1e-10

SPATIAL_REQUESTS = [
    {"notation": "physicist"},
    {"basis": "spin-orbital", "spin_layout": "interleaved"},
    {"basis": "spin-orbital", "spin_layout": "blocked"},
    {"basis": "spin-orbital", "spin_layout": "blocked", "notation": "physicist"},
    {
        "basis": "spin-orbital",
        "spin_layout": "interleaved",
        "notation": "physicist",
        "antisymmetrize": True,
    },
    {
        "basis": "spin-orbital",
        "spin_layout": "blocked",
        "notation": "physicist",
        "antisymmetrize": True,
    },
]
REAL_ONLY = [
    {"storage": "pairs"},
    {"storage": "unique"},
    {"basis": "spin-orbital", "storage": "unique"},
]
SPIN_ORBITAL_REQUESTS = [
    {"spin_layout": "blocked"},
    {"notation": "physicist"},
    {"notation": "physicist", "antisymmetrize": True},
    {"spin_layout": "blocked", "notation": "physicist", "antisymmetrize": True},
]


def _slater_condon(ham, occupation):
    """The determinant's energy from the rules above, on a dense chemist, not antisymmetrized input.

    Each occupied spin orbital is (orbital, spin); ``spin`` is None in a spin-orbital file,
    whose exchange integrals carry the spin themselves.
    """
    two = ham.two_electron
    assert two.storage == "dense" and two.notation == "chemist" and not two.antisymmetrized
    h, g = np.asarray(ham.one_electron), np.asarray(two.array)
    if ham.basis == "spin-orbital":
        occupied = [(k, None) for k in sorted(set(occupation[0]) | set(occupation[1]))]
    else:
        occupied = [(i, 0) for i in occupation[0]] + [(i, 1) for i in occupation[1]]

    def one(i, a):
        return h[a][i, i] if ham.basis == "unrestricted" else h[i, i]

    def coulomb(i, a, j, b):  # (ii|jj)
        if ham.basis != "unrestricted":
            return g[i, i, j, j]
        if a == b:
            return g[2 * a][i, i, j, j]
        return g[1][i, i, j, j] if a == 0 else g[1][j, j, i, i]

    def exchange(i, a, j, b):  # (ij|ji), zero between opposite spins
        if a != b:
            return 0.0
        return g[2 * a][i, j, j, i] if ham.basis == "unrestricted" else g[i, j, j, i]

    energy = ham.core_energy + sum(one(i, a) for i, a in occupied)
    for i, a in occupied:
        for j, b in occupied:
            energy += 0.5 * (coulomb(i, a, j, b) - exchange(i, a, j, b))
    return energy


def _assert_same_energies(before, after):
    """Every reference determinant of ``after`` has the energy the rules give on ``before``."""
    labels = {ref.label for ref in before.references}
    assert labels == {ref.label for ref in after.references} == {"hf", "hf-default"}
    for ref in before.references:
        expected = _slater_condon(before, reference_occupation(before, ref))
        converted = determinant_energy(after, reference_occupation(after, after.reference(ref.label)))
        assert abs(converted - expected) < TOL, (ref.label, expected, converted)


@pytest.mark.parametrize("request_", SPATIAL_REQUESTS + REAL_ONLY + [{"basis": "unrestricted"}], ids=str)
def test_restricted_determinant_energies_survive_every_conversion(request_):
    ham = restricted(4, seeded(f"energy r {request_}"))
    _assert_same_energies(ham, convert(ham, **request_).hamiltonian)


@pytest.mark.parametrize("request_", SPATIAL_REQUESTS, ids=str)
def test_complex_restricted_determinant_energies_survive_every_conversion(request_):
    ham = restricted(3, seeded(f"energy c {request_}"), is_complex=True)
    _assert_same_energies(ham, convert(ham, **request_).hamiltonian)


@pytest.mark.parametrize(
    ("request_", "is_complex"),
    [(r, c) for r in SPATIAL_REQUESTS for c in (False, True)] + [({"storage": "pairs"}, False)],
    ids=str,
)
def test_unrestricted_determinant_energies_survive_every_conversion(request_, is_complex):
    ham = unrestricted(3, seeded(f"energy u {request_} {is_complex}"), is_complex=is_complex)
    _assert_same_energies(ham, convert(ham, **request_).hamiltonian)


@pytest.mark.parametrize("layout", ["interleaved", "blocked"])
@pytest.mark.parametrize("request_", SPIN_ORBITAL_REQUESTS, ids=str)
def test_spin_orbital_determinant_energies_survive_every_conversion(request_, layout):
    ham = generic_spin_orbital(6, seeded(f"energy so {request_} {layout}"), layout=layout)
    _assert_same_energies(ham, convert(ham, **request_).hamiltonian)


@PROPERTY_SETTINGS
@given(
    n=st.integers(1, 4),
    is_complex=st.booleans(),
    layout=st.sampled_from(["interleaved", "blocked"]),
    antisym=st.booleans(),
    seed=st.integers(0, 2**32 - 1),
)
def test_spin_orbital_and_back_keeps_every_reference_energy(n, is_complex, layout, antisym, seed):
    ham = restricted(n, np.random.default_rng(seed), is_complex=is_complex)
    request_ = {"basis": "spin-orbital", "spin_layout": layout}
    if antisym:
        request_ |= {"notation": "physicist", "antisymmetrize": True}
    so = convert(ham, **request_).hamiltonian
    _assert_same_energies(ham, so)
    if not antisym:
        _assert_same_energies(ham, convert(so, basis="restricted").hamiltonian)


def _fci_energy(ham):
    from integrity.solver import solve_arrays

    eri = dense_chemist(ham.two_electron, ham.basis, ham.n)
    kwargs = {"n_alpha": ham.electrons.alpha, "n_beta": ham.electrons.beta}
    if ham.basis == "spin-orbital":
        kwargs = {
            "n_electrons": ham.electrons.total,
            "spin_layout": ham.orbitals.spin_layout,
            "n_alpha": ham.electrons.alpha,
        }
    result = solve_arrays(ham.basis, np.asarray(ham.one_electron), np.asarray(eri), ham.core_energy, **kwargs)
    return result.roots[0].energy


@pytest.mark.parametrize("layout", ["interleaved", "blocked"])
@pytest.mark.parametrize("basis", ["restricted", "unrestricted"])
def test_full_ci_energies_are_the_same_in_the_spin_orbital_basis(basis, layout):
    build = restricted if basis == "restricted" else unrestricted
    ham = build(3, seeded(f"fci {basis} {layout}"), irreps=False)
    ham = ham.replace(electrons=type(ham.electrons)(2, 1), references=())
    so = convert(ham, basis="spin-orbital", spin_layout=layout, notation="physicist").hamiltonian
    assert abs(_fci_energy(so) - _fci_energy(ham)) < 1e-9


def test_full_ci_energy_is_the_same_after_packing_and_a_change_of_notation():
    ham = restricted(4, seeded("fci packed"), irreps=False)
    ham = ham.replace(electrons=type(ham.electrons)(2, 2), references=())
    reference = _fci_energy(ham)
    for request_ in ({"storage": "unique"}, {"notation": "physicist"}):
        assert abs(_fci_energy(convert(ham, **request_).hamiltonian) - reference) < 1e-9
