"""diagnose names the mistake behind each damaged fixture by re-enacting it."""

from __future__ import annotations

import pytest
from click.testing import CliRunner
from locations import DAMAGED, GOOD

from integrity import diagnose, load
from integrity.cli import main

CASES = [
    ("n2_core_energy_dropped.json", "fci", "constants", "frozen_core"),
    ("o2_uhf_swapped_counts.json", "fci", "alpha/beta", "exchanged"),
    ("o2_wrong_spin_reference.h5", "fci-singlet", "other state", "2S = 2"),
    ("water_physicist_as_chemist.h5", "hf", "notation", "physicist"),
]


@pytest.mark.slow
@pytest.mark.parametrize(("name", "label", "hypothesis", "words"), CASES, ids=[c[0] for c in CASES])
def test_the_matching_hypothesis_names_the_fault(name, label, hypothesis, words):
    finding = diagnose(load(DAMAGED / name), reference=label)
    assert not finding.matches
    names = {h.name for h in finding.explanations}
    assert hypothesis in names
    assert any(words in h.description for h in finding.explanations)


def test_a_good_file_matches_as_stored_and_exits_zero():
    result = CliRunner().invoke(main, ["diagnose", str(GOOD / "lih_sto3g.h5"), "--reference", "fci"])
    assert result.exit_code == 0
    assert "matches as stored" in result.output


def test_an_expected_energy_that_nothing_explains_lists_what_was_tried():
    ham = load(GOOD / "h4_chain_stretched_rhf.json")
    finding = diagnose(ham, expected=ham.reference("fci").energy + 0.123456)
    assert not finding.explanations
    assert len(finding.hypotheses) > 5


def test_the_cli_needs_an_expected_energy_or_a_reference():
    result = CliRunner().invoke(main, ["diagnose", str(GOOD / "lih_sto3g.h5")])
    assert result.exit_code == 2
