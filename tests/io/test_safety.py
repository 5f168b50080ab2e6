"""Writes are atomic and never replace a file by accident; wrap never guesses."""

from __future__ import annotations

import numpy as np
import pytest
from plain_format import assert_same_bits, random_tree, write_plain_hdf5, write_plain_json

from integrity.cli import main
from integrity.errors import ContainerError, IntegrityError, OutputError, OverwriteError
from integrity.io import hdf5, jsonfile, load, save
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, TwoElectron

CONTAINERS = ["h5", "json"]


def _hamiltonian(rng, n=3, title="new") -> Hamiltonian:
    return Hamiltonian(
        orbitals=Orbitals(count=n, basis="restricted"),
        electrons=Electrons(1, 1),
        core_energy=float(rng.standard_normal()),
        one_electron=rng.standard_normal((n, n)),
        two_electron=TwoElectron(rng.standard_normal((n, n, n, n)), notation="chemist"),
        title=title,
    )


class Interrupted(Exception):
    """Stands for a crash halfway through a write."""


def _interrupt_second_array(monkeypatch, container, exception, seen):
    """Make the writer die after the first array, noting the files present at that moment."""
    module = hdf5 if container == "h5" else jsonfile
    original = module._write_array
    calls = []

    def dying(*args, **kwargs):
        calls.append(1)
        if len(calls) == 2:
            folder = seen["folder"]
            seen["during"] = sorted(p.name for p in folder.iterdir())
            raise exception("interrupted")
        return original(*args, **kwargs)

    monkeypatch.setattr(module, "_write_array", dying)


@pytest.mark.parametrize("container", CONTAINERS)
@pytest.mark.parametrize("exception", [Interrupted, KeyboardInterrupt])
def test_an_interrupted_write_leaves_no_file_under_the_name_and_no_temporary_file(
    tmp_path, rng, monkeypatch, container, exception
):
    seen = {"folder": tmp_path}
    _interrupt_second_array(monkeypatch, container, exception, seen)
    target = tmp_path / f"out.{container}"
    with pytest.raises(exception):
        save(_hamiltonian(rng), target)
    assert seen["during"], "the writer wrote nothing before the interruption"
    assert all(name.startswith(".out.") and name.endswith(".part") for name in seen["during"])
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("container", CONTAINERS)
def test_an_existing_file_is_unchanged_after_a_failed_overwrite(tmp_path, rng, monkeypatch, container):
    target = tmp_path / f"out.{container}"
    save(_hamiltonian(rng, title="old"), target)
    before = target.read_bytes()
    seen = {"folder": tmp_path}
    _interrupt_second_array(monkeypatch, container, Interrupted, seen)
    with pytest.raises(Interrupted):
        save(_hamiltonian(rng, title="new"), target, overwrite=True)
    assert target.read_bytes() == before
    assert [p.name for p in tmp_path.iterdir()] == [target.name]
    monkeypatch.undo()
    assert load(target).title == "old"


@pytest.mark.parametrize("container", CONTAINERS)
def test_an_existing_file_is_never_overwritten_without_overwrite(tmp_path, rng, container):
    target = tmp_path / f"out.{container}"
    save(_hamiltonian(rng, title="old"), target)
    before = target.read_bytes()
    with pytest.raises(OverwriteError) as caught:
        save(_hamiltonian(rng, title="new"), target)
    assert str(target) in str(caught.value) and "--overwrite" in str(caught.value)
    assert target.read_bytes() == before
    assert [p.name for p in tmp_path.iterdir()] == [target.name]
    save(_hamiltonian(rng, title="new"), target, overwrite=True)
    assert load(target).title == "new"


@pytest.mark.parametrize("container", CONTAINERS)
def test_a_file_that_appears_during_the_write_is_not_replaced(tmp_path, rng, monkeypatch, container):
    target = tmp_path / f"out.{container}"
    module = hdf5 if container == "h5" else jsonfile
    original = module._write_array

    def racing(*args, **kwargs):
        if not target.exists():
            target.write_text("another process wrote this")
        return original(*args, **kwargs)

    monkeypatch.setattr(module, "_write_array", racing)
    with pytest.raises(OverwriteError):
        save(_hamiltonian(rng), target)
    assert target.read_text() == "another process wrote this"
    assert [p.name for p in tmp_path.iterdir()] == [target.name]


def test_writing_into_a_missing_folder_is_refused_clearly(tmp_path, rng):
    with pytest.raises(OutputError, match="does not exist"):
        save(_hamiltonian(rng), tmp_path / "nowhere" / "out.h5")
    assert list(tmp_path.iterdir()) == []


def test_an_unknown_extension_is_refused_before_writing(tmp_path, rng):
    with pytest.raises(ContainerError, match=r"\.txt"):
        save(_hamiltonian(rng), tmp_path / "out.txt")
    assert list(tmp_path.iterdir()) == []


# ---------------------------------------------------------------- the command line


def _npz(path, rng, n=2, core_energy=None, **extra):
    arrays = {"one_electron": rng.standard_normal((n, n)), "two_electron": rng.standard_normal((n, n, n, n))} | extra
    if core_energy is not None:
        arrays["core_energy"] = np.float64(core_energy)
    np.savez(path, **arrays)
    return arrays


WRAP_REQUIRED = {"--notation": "chemist", "--alpha": "1", "--beta": "1", "--basis": "restricted"}


def _wrap_args(skip=None, **more):
    args = []
    for option, value in (WRAP_REQUIRED | more).items():
        if option != skip:
            args += [option, value]
    return args


def test_wrap_writes_the_arrays_unchanged_with_the_stated_conventions(runner, in_tmp, rng):
    arrays = _npz("ints.npz", rng, n=3)
    result = runner.invoke(main, ["wrap", "ints.npz", "out.h5", *_wrap_args(**{"--core-energy": "0.75"})])
    assert result.exit_code == 0, result.output
    assert result.stdout.strip() == "wrote out.h5: 3 restricted orbitals"
    ham = load("out.h5")
    assert_same_bits(ham.one_electron, arrays["one_electron"], "one_electron")
    assert_same_bits(ham.two_electron.array, arrays["two_electron"], "two_electron")
    assert ham.core_energy == 0.75 and ham.two_electron.notation == "chemist"
    assert (ham.electrons.alpha, ham.electrons.beta) == (1, 1)


@pytest.mark.parametrize("missing", sorted(WRAP_REQUIRED))
def test_wrap_requires_notation_electron_counts_and_basis(runner, in_tmp, rng, missing):
    _npz("ints.npz", rng, core_energy=0.5)
    result = runner.invoke(main, ["wrap", "ints.npz", "out.h5", *_wrap_args(skip=missing)])
    assert result.exit_code == 2
    assert f"Missing option '{missing}'" in result.stderr
    assert not (in_tmp / "out.h5").exists()


def test_wrap_requires_a_core_energy_from_the_archive_or_the_command_line(runner, in_tmp, rng):
    _npz("ints.npz", rng)
    result = runner.invoke(main, ["wrap", "ints.npz", "out.h5", *_wrap_args()])
    assert result.exit_code == 2
    assert "core_energy" in result.stderr and "--core-energy" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
    assert not (in_tmp / "out.h5").exists()
    assert runner.invoke(main, ["wrap", "ints.npz", "zero.h5", *_wrap_args(**{"--core-energy": "0"})]).exit_code == 0
    assert load("zero.h5").core_energy == 0.0


def test_wrap_takes_the_core_energy_from_the_archive_but_not_twice(runner, in_tmp, rng):
    _npz("ints.npz", rng, core_energy=-1.25)
    assert runner.invoke(main, ["wrap", "ints.npz", "out.json", *_wrap_args()]).exit_code == 0
    assert load("out.json").core_energy == -1.25
    twice = runner.invoke(main, ["wrap", "ints.npz", "twice.json", *_wrap_args(**{"--core-energy": "1"})])
    assert twice.exit_code == 2 and "core_energy" in twice.stderr
    assert not (in_tmp / "twice.json").exists()


def test_wrap_refuses_an_archive_key_it_would_ignore(runner, in_tmp, rng):
    _npz("ints.npz", rng, core_energy=0.0, h1e=np.eye(2))
    result = runner.invoke(main, ["wrap", "ints.npz", "out.h5", *_wrap_args()])
    assert result.exit_code == 2 and "h1e" in result.stderr


def test_wrap_of_spin_orbitals_requires_a_spin_layout(runner, in_tmp, rng):
    _npz("ints.npz", rng, core_energy=0.0)
    result = runner.invoke(main, ["wrap", "ints.npz", "out.h5", *_wrap_args(**{"--basis": "spin-orbital"})])
    assert result.exit_code == 2 and "spin_layout" in result.stderr
    ok = runner.invoke(
        main, ["wrap", "ints.npz", "out.h5", *_wrap_args(**{"--basis": "spin-orbital", "--spin-layout": "blocked"})]
    )
    assert ok.exit_code == 0, ok.output
    assert load("out.h5").orbitals.spin_layout == "blocked"


def test_wrap_never_overwrites_without_overwrite(runner, in_tmp, rng):
    _npz("ints.npz", rng, core_energy=0.0)
    assert runner.invoke(main, ["wrap", "ints.npz", "out.h5", *_wrap_args(), "--title", "first"]).exit_code == 0
    before = (in_tmp / "out.h5").read_bytes()
    again = runner.invoke(main, ["wrap", "ints.npz", "out.h5", *_wrap_args(), "--title", "second"])
    assert again.exit_code == 2
    assert "out.h5" in again.stderr and "exists" in again.stderr and "--overwrite" in again.stderr
    assert len(again.stderr.strip().splitlines()) == 1
    assert (in_tmp / "out.h5").read_bytes() == before
    forced = runner.invoke(main, ["wrap", "ints.npz", "out.h5", *_wrap_args(), "--title", "second", "--overwrite"])
    assert forced.exit_code == 0
    assert load("out.h5").title == "second"
    assert sorted(p.name for p in in_tmp.iterdir()) == ["ints.npz", "out.h5"]


def test_build_never_overwrites_without_overwrite(runner, in_tmp, rng, one_openmp_thread):
    write_plain_json(random_tree(rng), in_tmp / "h2.json")
    before = (in_tmp / "h2.json").read_bytes()
    result = runner.invoke(
        main, ["build", "h2.json", "--geometry", "H 0 0 0", "--geometry", "H 0 0 0.74", "--basis-set", "sto-3g"]
    )
    assert result.exit_code == 2 and "exists" in result.stderr and "--overwrite" in result.stderr
    assert (in_tmp / "h2.json").read_bytes() == before
    forced = runner.invoke(
        main,
        [
            "build",
            "h2.json",
            "--geometry",
            "H 0 0 0",
            "--geometry",
            "H 0 0 0.74",
            "--basis-set",
            "sto-3g",
            "--overwrite",
        ],
    )
    assert forced.exit_code == 0, forced.output
    assert load("h2.json").title.startswith("H2 sto-3g")


def test_a_failed_show_writes_nothing(runner, in_tmp, rng):
    tree = random_tree(rng)
    del tree["core_energy"]
    write_plain_hdf5(tree, in_tmp / "broken.h5")
    result = runner.invoke(main, ["show", "broken.h5"])
    assert result.exit_code == 2
    assert [p.name for p in in_tmp.iterdir()] == ["broken.h5"]
    with pytest.raises(IntegrityError):
        load("broken.h5")
