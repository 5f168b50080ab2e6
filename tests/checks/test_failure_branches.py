"""Every check's failure branch is reached: one damaged input per check id, its verdict and its `where`.

A check whose failure branch were switched off (``if bad:`` read as ``if
False:``) would fail one of these tests; bench/mutations.py does that to each
check in turn and shows which test catches it. A check registered with
severity ``warn`` warns where another would fail. A new check needs a row here
(the first test holds the table to the registry).
"""

from __future__ import annotations

import json

import pytest
from locations import DAMAGED, GOOD

from integrity.checks import REGISTRY, check, check_ids
from integrity.checks.registry import beyond


def _water_with(tmp_path, name: str, edit) -> str:
    """The good water file as JSON with one edit of its document."""
    document = json.loads((GOOD / "water_sto3g.json").read_text())
    edit(document)
    path = tmp_path / name
    path.write_text(json.dumps(document))
    return str(path)


def _schema(tmp_path):
    return _water_with(tmp_path, "schema.json", lambda d: d["electrons"].update(alpha="five"))


def _shape(tmp_path):
    return _water_with(tmp_path, "shape.json", lambda d: d["two_electron"].update(shape=[7, 7, 49]))


def _fixture(name: str):
    return lambda tmp_path: str(DAMAGED / name)


def _element(array: str, *index: int) -> dict:
    return {"array": array, "index": list(index)}


#: check id -> (damaged input, the `where` of its finding)
CASES = {
    "schema": (_schema, {"field": "electrons.alpha"}),
    "arrays.shape": (_shape, {"field": "two_electron"}),
    "arrays.finite": (_fixture("hubbard_ring6_nan.h5"), _element("two_electron", 2, 2, 2, 2)),
    "checksum": (_fixture("lih_stale_checksum.json"), {"field": "checksum"}),
    "electrons.count": (_fixture("o2_uhf_swapped_counts.json"), {"field": "references[hf].occupation"}),
    "core_energy.parts": (_fixture("n2_core_energy_dropped.json"), {"field": "core_energy"}),
    "one_electron.hermitian": (_fixture("lih_one_electron_altered.h5"), _element("one_electron", 2, 5)),
    "two_electron.symmetry": (_fixture("lih_perturbed_element.h5"), _element("two_electron", 5, 2, 3, 3)),
    "two_electron.notation": (_fixture("water_physicist_as_chemist.h5"), {"field": "two_electron.notation"}),
    "two_electron.positive": (_fixture("water_physicist_as_chemist.h5"), _element("two_electron", 0, 4, 0, 4)),
    "orbitals.irreps": (_fixture("lih_spin_orbital_layout_mislabelled.json"), {"field": "orbitals.irreps[2]"}),
    "orbitals.spin_coupling": (_fixture("h4_spin_orbital_alpha_beta_coupling.h5"), _element("one_electron", 0, 6)),
    "orbitals.canonical": (_fixture("h4_spin_orbital_alpha_beta_coupling.h5"), _element("fock", 0, 6)),
    "energy.hf": (_fixture("n2_core_energy_dropped.json"), {"field": "references[hf]"}),
    "energy.fci": (_fixture("o2_wrong_spin_reference.h5"), {"field": "references[fci-singlet]"}),
}


def test_every_registered_check_has_a_damaged_input():
    assert sorted(CASES) == sorted(check_ids())


@pytest.mark.parametrize("check_id", list(CASES))
def test_the_damaged_input_reaches_the_failure_branch(tmp_path, check_id):
    make, where = CASES[check_id]
    spec = REGISTRY[check_id]
    report = check(make(tmp_path), only=(check_id,))
    result = next(r for r in report.results if r.id == check_id)
    assert result.status == spec.severity, result.message  # "fail", or "warn" for a warning check
    assert report.status == ("fail" if spec.severity == "fail" else "pass")
    assert result.where.as_dict() == where
    assert beyond(result.value, 0.0 if result.limit is None else result.limit, spec.fails_when)
