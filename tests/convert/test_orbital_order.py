"""convert's relabelling (--orbital-order, --orbital-signs, --exchange-spins) against the plain formula."""

from __future__ import annotations

import numpy as np
import pytest
from builders import restricted, seeded, spin_orbital_of, unrestricted
from locations import GOOD
from relabelling import relabelled

from integrity import load
from integrity.cli import main
from integrity.convert import convert
from integrity.energies import determinant_energy, solve
from integrity.energies.meanfield import reference_occupation
from integrity.errors import FieldError, RefusedError
from integrity.model.fingerprint import fingerprint


def _same(first, second, tolerance=1e-12):
    for x, y in ((first.one_electron, second.one_electron), (first.two_electron.array, second.two_electron.array)):
        assert np.max(np.abs(np.asarray(x) - np.asarray(y))) <= tolerance
    assert first.electrons == second.electrons
    assert first.orbitals.irreps == second.orbitals.irreps
    assert [r.occupation for r in first.references] == [r.occupation for r in second.references]


def test_a_restricted_relabelling_is_the_signed_permutation_of_every_index():
    ham = restricted(5, seeded("relabel restricted"))
    order, signs = (3, 0, 4, 1, 2), (1, -1, -1, 1, -1)
    result = convert(ham, orbital_order=order, orbital_signs=signs)
    _same(result.hamiltonian, relabelled(ham, order, signs))
    (entry,) = result.steps
    assert (entry["step"], entry["from"], entry["to"], entry["signs"]) == ("relabel", "0-4", "3,0,4,1,2", "+--+-")
    assert entry["fingerprint_changed"] and entry["exchange_spins"] is False


def test_unrestricted_files_take_an_order_and_signs_per_spin_and_may_exchange_the_spins():
    ham = unrestricted(4, seeded("relabel unrestricted"), irreps=False)
    alpha, beta = (2, 0, 3, 1), (1, 3, 0, 2)
    signs_a, signs_b = (1, 1, -1, -1), (-1, 1, 1, -1)
    result = convert(ham, orbital_order=(alpha, beta), orbital_signs=(signs_a, signs_b), exchange_spins=True)
    expected = relabelled(ham, alpha, signs_a, beta_order=beta, beta_signs=signs_b, exchange=True)
    _same(result.hamiltonian, expected)
    assert result.steps[0]["to"] == "2,0,3,1/1,3,0,2" and result.steps[0]["exchange_spins"] is True


def test_per_spin_orders_that_would_give_an_orbital_two_irreps_are_refused():
    ham = unrestricted(3, seeded("irreps per spin"))
    ham = ham.replace(orbitals=ham.orbitals.__class__(3, "unrestricted", point_group="C2", irreps=(0, 1, 1)))
    with pytest.raises(RefusedError, match="one irrep per orbital"):
        convert(ham, orbital_order=((0, 1, 2), (1, 0, 2)))


def test_energies_do_not_change_and_the_inverse_relabelling_restores_the_file_bit_for_bit():
    ham = restricted(5, seeded("energies"), storage="pairs")
    order, signs = (4, 2, 0, 1, 3), (-1, 1, 1, -1, 1)
    moved = convert(ham, orbital_order=order, orbital_signs=signs).hamiltonian
    assert moved.two_electron.storage == "pairs"
    assert solve(moved, roots=2).energies == pytest.approx(solve(ham, roots=2).energies, abs=1e-9)
    for before, after in zip(ham.references, moved.references, strict=True):
        energy = determinant_energy(moved, reference_occupation(moved, after))
        assert energy == pytest.approx(before.energy, abs=1e-10)
    inverse = np.argsort(order)
    back = convert(moved, orbital_order=inverse, orbital_signs=np.asarray(signs)[inverse]).hamiltonian
    assert fingerprint(back) == fingerprint(ham)


def test_a_spin_orbital_order_must_keep_each_spin_or_exchange_them_all():
    ham = spin_orbital_of(restricted(2, seeded("spin orbitals"), irreps=False), "interleaved")
    with pytest.raises(RefusedError, match="--exchange-spins"):
        convert(ham, orbital_order=(1, 0, 2, 3))
    swapped = convert(ham, orbital_order=(1, 0, 3, 2), exchange_spins=True).hamiltonian
    assert swapped.electrons.alpha == ham.electrons.beta and swapped.electrons.beta == ham.electrons.alpha
    with pytest.raises(RefusedError, match="other spin"):
        convert(ham, orbital_order=(0, 1, 3, 2), exchange_spins=True)


@pytest.mark.parametrize(
    ("order", "signs", "words"),
    [
        ((0, 1, 1), None, "1 listed twice; 2 missing"),
        ((0, 1, 5), None, "5 out of range"),
        ((0, 1), None, "2 indices for 3 orbitals"),
        (None, (1, 0, 1), "each \\+1 or -1"),
        (((0, 1, 2), (0, 2, 1)), None, "unrestricted files only"),
    ],
)
def test_a_malformed_order_or_sign_list_is_refused_naming_the_option(order, signs, words):
    ham = restricted(3, seeded("malformed"))
    with pytest.raises(FieldError, match=words):
        convert(ham, orbital_order=order, orbital_signs=signs)


@pytest.mark.slow
def test_the_command_applies_an_order_and_signs_written_as_text(runner, tmp_path):
    source = GOOD / "water_sto3g.json"
    out = tmp_path / "water_relabelled.h5"
    result = runner.invoke(
        main, ["convert", str(source), str(out), "--orbital-order", "6,0-2,5,4,3", "--orbital-signs", "+-+-+--"]
    )
    assert result.exit_code == 0, result.output
    assert "relabel: 0-6 -> 6,0-2,5,4,3, signs +-+-+--" in result.output
    _same(load(out), relabelled(load(source), (6, 0, 1, 2, 5, 4, 3), (1, -1, 1, -1, 1, -1, -1)))
    assert runner.invoke(main, ["check", str(out)]).exit_code == 0
    bad = runner.invoke(main, ["convert", str(source), str(tmp_path / "x.h5"), "--orbital-signs", "+*"])
    assert bad.exit_code == 2 and "--orbital-signs" in bad.output
