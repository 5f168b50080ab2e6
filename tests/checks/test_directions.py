"""Value and limit are comparable for every check: a check fails (or, for one that only warns, warns) exactly
when its value lies beyond its limit in the direction it registers, and a failing message prints that value."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from locations import DAMAGED, GOOD

from integrity.checks import REGISTRY, check, check_ids
from integrity.checks.registry import DIRECTIONS, beyond, figure
from integrity.cli.options import parse_tolerances
from integrity.model.hamiltonian import TwoElectron
from integrity.testing import random_hamiltonian

FIXTURE_FILES = sorted(p for p in [*GOOD.iterdir(), *DAMAGED.iterdir()] if p.suffix in (".h5", ".json"))


def assert_comparable(result):
    """The law, for one result: status follows the comparison, and a finding prints its value."""
    spec = REGISTRY[result.id]
    assert result.fails_when == spec.fails_when
    is_beyond = beyond(result.value, result.limit, spec.fails_when)
    if spec.severity == "fail":
        assert (result.status == "fail") == is_beyond, (result.id, result.status, result.value, result.limit)
    else:
        assert result.status != "fail"
        assert (result.status == "warn") == is_beyond, (result.id, result.status, result.value, result.limit)
    if result.status == "fail" or (spec.severity == "warn" and is_beyond):
        assert result.value is not None and result.limit is not None
        assert figure(result.value) in result.message, (result.id, figure(result.value), result.message)


def test_every_check_registers_a_direction_and_a_default_limit_on_its_side_of_zero():
    for check_id in check_ids():
        spec = REGISTRY[check_id]
        assert spec.fails_when in DIRECTIONS
        assert spec.severity in ("fail", "warn")
        if spec.tunable:
            assert spec.limit_problem(spec.limit) is None, check_id
            assert (spec.limit <= 0) if spec.fails_when == "below" else (spec.limit >= 0)
        assert ("value <" if spec.fails_when == "below" else "value >") in spec.rule


@pytest.mark.parametrize("check_id", [i for i in check_ids() if REGISTRY[i].tunable])
def test_a_tolerance_on_the_documented_side_is_accepted_and_the_other_side_refused(check_id):
    import click

    spec = REGISTRY[check_id]
    good = -1e-3 if spec.fails_when == "below" else 1e-3
    assert parse_tolerances(None, None, [f"{check_id}={good}"]) == {check_id: good}
    with pytest.raises(click.BadParameter, match=r"0 or (positive|negative)"):
        parse_tolerances(None, None, [f"{check_id}={-good}"])


@pytest.mark.parametrize("check_id", [i for i in check_ids() if not REGISTRY[i].tunable])
def test_a_check_that_counts_problems_has_no_limit_to_set(check_id):
    import click

    with pytest.raises(click.BadParameter, match="no limit to set"):
        parse_tolerances(None, None, [f"{check_id}=1"])


@pytest.mark.slow
@pytest.mark.parametrize("path", FIXTURE_FILES, ids=lambda p: f"{p.parent.name}/{p.name}")
def test_the_law_holds_for_every_result_on_every_fixture(path):
    report = check(path)
    for result in report.results:
        assert_comparable(result)


DAMAGES = ("none", "element", "notation", "negative", "core", "reference", "loose", "transpose")


def _damaged(ham, damage: str, rng):
    two = ham.two_electron
    eri = np.array(two.array)
    if damage == "element":
        index = tuple(int(rng.integers(0, extent)) for extent in eri.shape)
        eri[index] += rng.choice([1e-12, 1e-9, 1e-6, 1e-3, 0.3])
    elif damage == "notation":
        eri = np.ascontiguousarray(np.swapaxes(eri, -3, -2))  # physicist read as chemist
    elif damage == "negative":
        eri = -eri
    elif damage == "core":
        return ham.replace(core_energy=ham.core_energy + rng.choice([1e-9, 1e-5, 0.25]))
    elif damage == "reference":
        refs = tuple(dataclasses.replace(r, energy=r.energy + 1e-4) for r in ham.references)
        return ham.replace(references=refs)
    elif damage == "loose":
        refs = tuple(dataclasses.replace(r, energy=r.energy + 1e-5, tolerance=1e-4) for r in ham.references)
        return ham.replace(references=refs)
    elif damage == "transpose":
        return ham.replace(one_electron=np.ascontiguousarray(np.swapaxes(np.asarray(ham.one_electron), -1, -2)))
    return ham.replace(two_electron=TwoElectron(eri, notation=two.notation, storage=two.storage))


def _with_references(ham):
    from integrity.energies import solve
    from integrity.energies.meanfield import default_occupation, determinant_energy
    from integrity.model.hamiltonian import Reference

    occupation = default_occupation(ham, ham.electrons.alpha, ham.electrons.beta)
    hf = float(np.real(determinant_energy(ham, occupation)))
    fci = solve(ham).roots[0].energy
    return ham.replace(references=(Reference("hf", "hf", hf), Reference("fci", "fci", fci)))


@pytest.mark.slow
@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    basis=st.sampled_from(["restricted", "unrestricted"]),
    n=st.integers(2, 4),
    complex_values=st.booleans(),
    seed=st.integers(0, 2**16),
    damage=st.sampled_from(DAMAGES),
    strict_limit=st.sampled_from([None, 1e-12, 1e-4]),
)
def test_the_law_holds_for_random_hamiltonians_with_random_damage(basis, n, complex_values, seed, damage, strict_limit):
    rng = np.random.default_rng(seed)
    ham = _with_references(random_hamiltonian(basis, n, complex_values=complex_values, seed=seed))
    ham = _damaged(ham, damage, rng)
    tolerances = {}
    if strict_limit is not None:
        tolerances = {i: strict_limit for i in ("two_electron.symmetry", "energy.hf", "one_electron.hermitian")}
    for result in check(ham, tolerances=tolerances).results:
        assert_comparable(result)
