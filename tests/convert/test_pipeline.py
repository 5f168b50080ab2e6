"""``convert``: step order, defaults, history entries, argument checks and the checksum guard."""

from __future__ import annotations

import re

import numpy as np
import pytest
from builders import restricted, same_bits, seeded, unrestricted

import integrity
from integrity.convert import convert, plan
from integrity.errors import FieldError, RefusedError
from integrity.model.fingerprint import fingerprint


def test_every_step_appends_one_history_entry_with_tool_date_and_fingerprint_flag():
    ham = restricted(3, seeded("history"), storage="pairs")
    ham = ham.replace(provenance={"producer": "tests", "history": [{"step": "earlier"}]})
    result = convert(ham, basis="spin-orbital", spin_layout="blocked", storage="unique")
    steps = [(s["step"], s["from"], s["to"]) for s in result.steps]
    assert steps == [
        ("storage", "pairs", "dense"),
        ("basis", "restricted", "spin-orbital"),
        ("storage", "dense", "unique"),
    ]
    history = result.hamiltonian.provenance["history"]
    assert history[0] == {"step": "earlier"} and history[1:] == list(result.steps)
    assert result.hamiltonian.provenance["producer"] == "tests"
    for entry in result.steps:
        assert entry["tool"] == f"integrity {integrity.__version__}"
        assert re.fullmatch(r"\d{4}-\d{2}-\d{2}", entry["date"])
        assert isinstance(entry["fingerprint_changed"], bool)
    assert [s["fingerprint_changed"] for s in result.steps] == [False, True, False]
    assert result.steps[1]["spin_layout"] == "blocked"


def test_the_result_has_no_checksum_and_the_input_is_left_alone():
    ham = restricted(2, seeded("untouched"))
    ham = ham.replace(checksum=fingerprint(ham))
    array = ham.two_electron.array.copy()
    result = convert(ham, notation="physicist")
    assert result.hamiltonian.checksum is None
    assert same_bits(ham.two_electron.array, array) and ham.two_electron.notation == "chemist"
    assert ham.provenance == {"producer": "tests/convert"}


def test_nothing_to_do_is_no_step_and_no_change():
    ham = restricted(2, seeded("nothing"))
    result = convert(ham)
    assert result.steps == () and not result.fingerprint_changed
    assert fingerprint(result.hamiltonian) == fingerprint(ham)
    assert result.hamiltonian.provenance == ham.provenance


def test_metadata_that_is_not_converted_travels_unchanged():
    ham = restricted(2, seeded("travels")).replace(core_energy_parts=None, title="water")
    so = convert(ham, basis="spin-orbital").hamiltonian
    assert (so.title, so.core_energy, so.electrons) == ("water", ham.core_energy, ham.electrons)
    assert so.orbitals.canonical is False and so.orbitals.point_group == "C2v"
    assert [r.label for r in so.references] == ["hf", "hf-default"]
    assert so.reference("hf").energy == ham.reference("hf").energy


@pytest.mark.parametrize(
    ("kwargs", "field", "pattern"),
    [
        (
            {"notation": "dirac"},
            "notation",
            r"'dirac' is not allowed; expected one of \('chemist', 'physicist'\)",
        ),
        ({"storage": "packed"}, "storage", r"'packed' is not allowed"),
        ({"basis": "general"}, "basis", r"'general' is not allowed"),
        (
            {"spin_layout": "mixed", "basis": "spin-orbital"},
            "spin_layout",
            r"'mixed' is not allowed",
        ),
        ({"tolerance": -1.0}, "tolerance", r"expected a finite number >= 0 \(hartree\), got -1.0"),
        ({"allow_loss": "yes"}, "allow_loss", r"expected True or False, got 'yes'"),
        ({"antisymmetrize": 1}, "antisymmetrize", r"expected True or False, got 1"),
    ],
)
def test_bad_arguments_are_usage_errors_naming_the_argument(kwargs, field, pattern):
    with pytest.raises(FieldError, match=pattern) as caught:
        convert(restricted(2, seeded("args")), **kwargs)
    assert caught.value.field == field


def test_a_storage_the_target_cannot_use_falls_back_to_dense():
    ham = restricted(2, seeded("fallback"), storage="unique")
    assert plan(ham, basis="unrestricted").storage == "dense"
    assert plan(ham, basis="spin-orbital").storage == "unique"
    assert plan(ham, notation="physicist").storage == "dense"


def test_an_unrestricted_pairs_file_keeps_pairs_through_a_spin_orbital_change():
    ham = unrestricted(2, seeded("u pairs"), storage="pairs")
    result = convert(ham, basis="spin-orbital")
    assert result.hamiltonian.two_electron.storage == "pairs"
    back = convert(result.hamiltonian, basis="unrestricted").hamiltonian
    assert same_bits(back.two_electron.array, ham.two_electron.array)


def test_a_checksum_that_does_not_match_is_refused_before_any_work():
    ham = restricted(2, seeded("checksum"))
    stale = fingerprint(ham.replace(core_energy=ham.core_energy + 1.0))
    with pytest.raises(RefusedError) as caught:
        convert(ham.replace(checksum=stale), notation="physicist")
    assert caught.value.field == "checksum"
    assert stale in str(caught.value) and fingerprint(ham) in str(caught.value)
    forced = convert(ham.replace(checksum=stale), notation="physicist", accept_checksum_mismatch=True)
    assert [s["step"] for s in forced.steps] == ["checksum", "notation"]
    assert forced.steps[0]["from"] == stale and forced.steps[0]["to"] == fingerprint(ham)


def test_a_matching_checksum_passes_without_an_entry():
    ham = restricted(2, seeded("good checksum"))
    result = convert(ham.replace(checksum=fingerprint(ham)), notation="physicist")
    assert [s["step"] for s in result.steps] == ["notation"]


def test_the_order_is_basis_then_layout_then_notation_then_antisymmetrize_then_storage():
    ham = restricted(2, seeded("order"), storage="pairs", notation="chemist")
    result = convert(ham, basis="spin-orbital", spin_layout="blocked", notation="physicist", antisymmetrize=True)
    assert [s["step"] for s in result.steps] == ["storage", "basis", "notation", "antisymmetrize"]
    assert result.hamiltonian.two_electron.storage == "dense"


def test_history_entries_survive_a_file_round_trip_as_objects(tmp_path):
    from integrity.io import load, save

    ham = restricted(2, seeded("history file"))
    result = convert(ham, storage="unique")
    for suffix in (".h5", ".json"):
        save(result.hamiltonian, tmp_path / f"h{suffix}")
        assert load(tmp_path / f"h{suffix}").provenance["history"] == list(result.steps)


def test_complex_one_electron_with_real_two_electron_converts():
    ham = restricted(2, seeded("mixed dtype"))
    ham = ham.replace(one_electron=ham.one_electron.astype(complex), references=())
    result = convert(ham, basis="spin-orbital").hamiltonian
    assert result.one_electron.dtype == np.complex128 and result.two_electron.array.dtype == np.float64
