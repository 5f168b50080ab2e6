"""integrity convert: several steps per call, refusals exit 2, never onto its input."""

from __future__ import annotations

from pathlib import Path

import pytest
from locations import FIXTURES

from integrity import load
from integrity.cli import main
from integrity.energies.meanfield import determinant_energy, reference_occupation
from integrity.model.fingerprint import fingerprint

WATER = str(FIXTURES / "good" / "water_sto3g.json")


@pytest.mark.slow
def test_several_steps_in_one_call_keep_the_energy_and_record_the_history(runner, tmp_path):
    out = tmp_path / "water_so.h5"
    args = [
        "convert",
        WATER,
        str(out),
        "--basis",
        "spin-orbital",
        "--spin-layout",
        "blocked",
        "--notation",
        "physicist",
    ]
    result = runner.invoke(main, args)
    assert result.exit_code == 0, result.output
    before, after = load(WATER), load(out)
    assert after.basis == "spin-orbital" and after.orbitals.spin_layout == "blocked"
    assert after.two_electron.notation == "physicist"
    hf_before = determinant_energy(before, reference_occupation(before, before.reference("hf")))
    hf_after = determinant_energy(after, reference_occupation(after, after.reference("hf")))
    assert hf_after == pytest.approx(hf_before, abs=1e-10)
    steps = [step["step"] for step in after.provenance["history"]]
    assert steps == ["basis", "notation", "container"]  # the basis step lays the spin orbitals out blocked
    assert runner.invoke(main, ["check", str(out)]).exit_code == 0


def test_a_container_and_notation_change_keeps_the_fingerprint(runner, tmp_path):
    out = tmp_path / "water.h5"
    assert runner.invoke(main, ["convert", WATER, str(out), "--notation", "physicist"]).exit_code == 0
    assert fingerprint(load(out)) == fingerprint(load(WATER))


def test_converting_onto_its_input_is_refused_even_with_overwrite(runner, tmp_path):
    copy = tmp_path / "w.json"
    copy.write_bytes(Path(WATER).read_bytes())
    result = runner.invoke(main, ["convert", str(copy), str(copy), "--notation", "physicist", "--overwrite"])
    assert result.exit_code == 2
    assert "input" in result.output
    assert copy.read_bytes() == Path(WATER).read_bytes()


def test_an_existing_output_needs_overwrite(runner, tmp_path):
    out = tmp_path / "w.h5"
    assert runner.invoke(main, ["convert", WATER, str(out)]).exit_code == 0
    again = runner.invoke(main, ["convert", WATER, str(out), "--notation", "physicist"])
    assert again.exit_code == 2 and "--overwrite" in again.output
    assert runner.invoke(main, ["convert", WATER, str(out), "--notation", "physicist", "--overwrite"]).exit_code == 0


def test_undoing_antisymmetrization_is_refused(runner, tmp_path):
    antisym = str(FIXTURES / "good" / "water_sto3g_antisymmetrized.h5")
    result = runner.invoke(main, ["convert", antisym, str(tmp_path / "r.h5"), "--basis", "restricted"])
    assert result.exit_code == 2
    assert "cannot be recovered" in result.output


def test_lossy_packing_is_refused_without_permission_and_recorded_with_it(runner, tmp_path):
    damaged = str(FIXTURES / "damaged" / "lih_perturbed_element.h5")
    refused = runner.invoke(main, ["convert", damaged, str(tmp_path / "p.h5"), "--storage", "pairs"])
    assert refused.exit_code == 2  # a damaged checksum, then an asymmetric array
    forced = runner.invoke(
        main,
        [
            "convert",
            damaged,
            str(tmp_path / "p.h5"),
            "--storage",
            "pairs",
            "--allow-loss",
            "--accept-checksum-mismatch",
        ],
    )
    assert forced.exit_code == 0, forced.output
    history = load(tmp_path / "p.h5").provenance["history"]
    dropped = [step["dropped_max_deviation"] for step in history if "dropped_max_deviation" in step]
    assert dropped and dropped[0] == pytest.approx(1e-6, rel=1e-6)


def test_json_output_refuses_nan_naming_the_element(runner, tmp_path):
    result = runner.invoke(
        main, ["convert", str(FIXTURES / "damaged" / "hubbard_ring6_nan.h5"), str(tmp_path / "ring.json")]
    )
    assert result.exit_code == 2
    assert "two_electron[2, 2, 2, 2]" in result.output
    assert not (tmp_path / "ring.json").exists()


def test_help_shows_an_example(runner):
    result = runner.invoke(main, ["convert", "--help"])
    assert result.exit_code == 0 and "Example" in result.output
