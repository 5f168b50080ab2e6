"""wrap judges at the door: float32 only when widened on request (and recorded), shapes reported together,
electron counts against the orbitals; references given on the command line are stored and energy-checked."""

from __future__ import annotations

import json

import numpy as np
import pytest
from locations import GOOD

from integrity.checks import check
from integrity.cli import main
from integrity.errors import FieldError
from integrity.io import load
from integrity.producers.from_arrays import parse_reference

REQUIRED = ["--notation", "chemist", "--basis", "restricted", "--core-energy", "0"]


def _wrap(runner, *extra, alpha="1", beta="1", out="out.h5"):
    return runner.invoke(main, ["wrap", "ints.npz", out, "--alpha", alpha, "--beta", beta, *REQUIRED, *extra])


def _lih_arrays(folder):
    """The LiH fixture's arrays as another group would hand them over, and the fixture."""
    ham = load(GOOD / "lih_sto3g.h5")
    np.savez(
        folder / "ints.npz",
        one_electron=np.asarray(ham.one_electron),
        two_electron=np.asarray(ham.two_electron.array),
        core_energy=np.float64(ham.core_energy),
    )
    return ham


def test_float32_arrays_are_refused_naming_the_option_that_widens_them(runner, in_tmp, rng):
    np.savez("ints.npz", one_electron=np.eye(2, dtype=np.float32), two_electron=np.zeros((2,) * 4))
    result = _wrap(runner)
    assert result.exit_code == 2
    assert "one_electron: dtype float32" in result.stderr and "--widen-float32" in result.stderr
    assert not (in_tmp / "out.h5").exists()


def test_widened_float32_is_stored_as_float64_and_recorded_in_the_history(runner, in_tmp, rng):
    one = rng.standard_normal((2, 2)).astype(np.float32)
    one = one + one.T
    np.savez("ints.npz", one_electron=one, two_electron=np.zeros((2,) * 4, dtype=np.complex64))
    result = _wrap(runner, "--widen-float32")
    assert result.exit_code == 0, result.output
    ham = load("out.h5")
    assert ham.one_electron.dtype == np.float64 and ham.two_electron.array.dtype == np.complex128
    assert np.array_equal(ham.one_electron, one.astype(np.float64))  # exactly the float32 values
    steps = [(s["step"], s["from"], s["to"], s["array"]) for s in ham.provenance["history"]]
    assert steps == [
        ("widen", "float32", "float64", "one_electron"),
        ("widen", "complex64", "complex128", "two_electron"),
    ]


@pytest.mark.parametrize("dtype", [np.int64, np.float16, np.bool_])
def test_other_dtypes_are_refused_even_with_the_option(runner, in_tmp, dtype):
    np.savez("ints.npz", one_electron=np.eye(2).astype(dtype), two_electron=np.zeros((2,) * 4))
    result = _wrap(runner, "--widen-float32")
    assert result.exit_code == 2 and "must be float64 or complex128" in result.stderr


def test_more_electrons_than_orbitals_is_refused_naming_the_option(runner, in_tmp):
    np.savez("ints.npz", one_electron=np.eye(8), two_electron=np.zeros((8,) * 4))
    result = _wrap(runner, alpha="9", beta="9")
    assert result.exit_code == 2
    assert result.stderr.startswith("error: --alpha: 9 alpha electrons do not fit the 8 orbitals per spin")
    assert not (in_tmp / "out.h5").exists()


@pytest.mark.parametrize(
    ("one", "two", "shapes"),
    [
        ((7, 7), (8, 8, 8, 8), "one_electron has shape (7, 7) and two_electron (8, 8, 8, 8)"),
        ((8, 8), (7, 7, 7, 7), "one_electron has shape (8, 8) and two_electron (7, 7, 7, 7)"),
        ((8, 7), (8, 8, 8, 8), "got shape (8, 7)"),
        ((2, 8, 8), (8, 8, 8, 8), "one_electron has shape (2, 8, 8) and two_electron (8, 8, 8, 8)"),
        ((8, 8), (8, 8, 8), "one_electron has shape (8, 8) and two_electron (8, 8, 8)"),
    ],
)
def test_arrays_that_do_not_fit_each_other_are_refused_with_both_shapes(runner, in_tmp, one, two, shapes):
    irreps = np.zeros(7, dtype=np.int64)  # a wrong irreps list must not be what the message is about
    np.savez("ints.npz", one_electron=np.zeros(one), two_electron=np.zeros(two), irreps=irreps)
    result = _wrap(runner)
    assert result.exit_code == 2
    assert shapes in result.stderr and "irreps" not in result.stderr
    assert len(result.stderr.splitlines()) == 1


def test_references_from_the_command_line_are_stored_and_checked(runner, in_tmp):
    ham = _lih_arrays(in_tmp)
    hf, fci = ham.reference("hf"), ham.reference("fci")
    args = ["--reference", f"hf={hf.energy!r}", "--reference", f"fci={fci.energy!r},two_s=0"]
    result = runner.invoke(
        main,
        [
            "wrap",
            "ints.npz",
            "out.h5",
            "--alpha",
            "2",
            "--beta",
            "2",
            "--notation",
            "chemist",
            "--basis",
            "restricted",
            *args,
        ],
    )
    assert result.exit_code == 0, result.output
    assert result.stdout == "wrote out.h5: 6 restricted orbitals, references hf, fci\n"
    wrapped = load("out.h5")
    assert [(r.label, r.method, r.energy, r.two_s) for r in wrapped.references] == [
        ("hf", "hf", hf.energy, None),
        ("fci", "fci", fci.energy, 0),
    ]
    statuses = {r.id: r.status for r in check("out.h5").results}
    assert statuses["energy.hf"] == statuses["energy.fci"] == "pass"


def test_a_wrong_reference_given_to_wrap_fails_the_energy_check(runner, in_tmp):
    ham = _lih_arrays(in_tmp)
    wrong = ham.reference("fci").energy + 0.01
    result = runner.invoke(
        main,
        [
            "wrap",
            "ints.npz",
            "out.json",
            "--alpha",
            "2",
            "--beta",
            "2",
            "--notation",
            "chemist",
            "--basis",
            "restricted",
            "--reference",
            f"ground={wrong!r},method=fci",
        ],
    )
    assert result.exit_code == 0, result.output
    assert json.loads((in_tmp / "out.json").read_text())["references"][0]["method"] == "fci"
    assert {r.id: r.status for r in check("out.json").results}["energy.fci"] == "fail"


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ("fci", "expected LABEL=ENERGY"),
        ("=1.0", "expected LABEL=ENERGY"),
        ("fci=inf", "not a finite number"),
        ("fci=low", "not a number"),
        ("ground=-1.0", "give method=hf or method=fci"),
        ("fci=-1.0,method=ccsd", "give method=hf or method=fci"),
        ("fci=-1.0,alpha=1", "give both alpha and beta"),
        ("fci=-1.0,two_s=-2", "must not be negative"),
        ("fci=-1.0,spin=0", "KEY one of method, alpha, beta"),
        ("fci=-1.0,root=0,root=1", "root is given twice"),
        ("fci=-1.0,tolerance=0", "tolerance must be greater than 0"),
    ],
)
def test_a_malformed_reference_is_refused_saying_what_was_expected(runner, in_tmp, text, words):
    with pytest.raises(FieldError, match=words):
        parse_reference(text)
    np.savez("ints.npz", one_electron=np.eye(2), two_electron=np.zeros((2,) * 4))
    result = _wrap(runner, "--reference", text)
    assert result.exit_code == 2 and "--reference" in result.stderr and words in result.stderr
    assert len(result.stderr.splitlines()) == 1
