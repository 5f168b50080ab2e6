"""integrity solve: energies and 2S of the lowest roots, from our engine and pyscf's."""

from __future__ import annotations

import json
import math

import pytest
from click.testing import CliRunner
from locations import GOOD

from integrity.cli import main


def test_the_half_filled_hubbard_ring_reproduces_its_pyscf_references():
    result = CliRunner().invoke(
        main, ["solve", str(GOOD / "hubbard_ring6_u4.json"), "--roots", "2", "--format", "json"]
    )
    assert result.exit_code == 0
    roots = json.loads(result.output)["results"][0]["roots"]
    from integrity import load

    ham = load(GOOD / "hubbard_ring6_u4.json")
    assert roots[0]["energy"] == pytest.approx(ham.reference("ground").energy, abs=1e-9)
    assert roots[1]["energy"] == pytest.approx(ham.reference("lowest-triplet").energy, abs=1e-9)
    assert [r["two_s"] for r in roots] == [0, 2]


@pytest.mark.slow
def test_both_engines_agree_on_the_o2_singlet():
    result = CliRunner().invoke(
        main,
        [
            "solve",
            str(GOOD / "o2_sto3g_cas86.h5"),
            "--alpha",
            "4",
            "--beta",
            "4",
            "--two-s",
            "0",
            "--engine",
            "both",
            "--format",
            "json",
        ],
    )
    assert result.exit_code == 0
    native, other = (r["roots"][0]["energy"] for r in json.loads(result.output)["results"])
    assert native == pytest.approx(other, abs=1e-9)


def test_the_hubbard_dimer_levels_are_the_analytic_ones(tmp_path):
    """Two sites at half filling: U/2 - sqrt(U^2/4 + 4t^2), 0 (triplet), U, U/2 + sqrt(...)
    (Source: Fazekas, Lecture Notes on Electron Correlation and Magnetism, World Scientific
    (1999), section 5.1 (from memory))."""
    import numpy as np

    from integrity import Electrons, Hamiltonian, Orbitals, TwoElectron, save

    t, u = 1.0, 3.0
    eri = np.zeros((2, 2, 2, 2))
    eri[0, 0, 0, 0] = eri[1, 1, 1, 1] = u
    ham = Hamiltonian(
        Orbitals(2, "restricted"),
        Electrons(1, 1),
        0.0,
        np.array([[0.0, -t], [-t, 0.0]]),
        TwoElectron(eri, "chemist", interaction="model"),
    )
    save(ham, tmp_path / "dimer.json")
    result = CliRunner().invoke(main, ["solve", str(tmp_path / "dimer.json"), "--roots", "4", "--format", "json"])
    energies = [r["energy"] for r in json.loads(result.output)["results"][0]["roots"]]
    root = math.sqrt(u * u / 4 + 4 * t * t)
    assert energies == pytest.approx([u / 2 - root, 0.0, u, u / 2 + root], abs=1e-9)


def test_asking_for_alpha_without_beta_is_a_usage_error():
    result = CliRunner().invoke(main, ["solve", str(GOOD / "lih_sto3g.h5"), "--alpha", "1"])
    assert result.exit_code == 2
