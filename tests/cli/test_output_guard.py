"""Every command that writes (convert, reduce, wrap, build) guards OUT before any work, and turns the
operating system's refusals during the write into one line with exit status 2, leaving no file."""

from __future__ import annotations

import hashlib
import importlib
import os
import resource
import shutil
import signal
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from locations import GOOD

from integrity.cli import main
from integrity.io import load, save
from integrity.model.fingerprint import fingerprint
from integrity.testing import random_hamiltonian

WRAP_OPTIONS = ["--notation", "chemist", "--alpha", "1", "--beta", "1", "--basis", "restricted"]
BUILD_OPTIONS = ["--geometry", "H 0 0 0", "--geometry", "H 0 0 0.74", "--basis-set", "sto-3g"]


def _digest(path) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def _arrays(path: Path, n: int = 3) -> Path:
    ham = random_hamiltonian("restricted", n, seed=n)
    with open(path, "wb") as handle:  # np.savez would add .npz to a name such as x.h5
        np.savez(handle, one_electron=ham.one_electron, two_electron=ham.two_electron.array, core_energy=0.5)
    return path


def _command(name: str, source: Path, out) -> list[str]:
    """The command line of ``name`` reading ``source`` and writing ``out``."""
    if name == "wrap":
        return ["wrap", str(source), str(out), *WRAP_OPTIONS]
    if name == "reduce":
        return ["reduce", str(source), str(out), "--active", "0-1"]
    return ["convert", str(source), str(out), "--notation", "physicist"]


def _source(name: str, folder: Path) -> Path:
    if name == "wrap":
        return _arrays(folder / "in.h5")  # an archive under a Hamiltonian's name: wrap x.h5 x.h5
    source = folder / "in.h5"
    shutil.copy(GOOD / "lih_sto3g.h5", source)
    return source


def _one_error_line(result) -> str:
    lines = result.stderr.strip().splitlines()
    assert result.exit_code == 2, result.output
    assert len(lines) == 1 and lines[0].startswith("error: ") and "internal error" not in lines[0], lines
    return lines[0]


@pytest.fixture
def runner():
    from click.testing import CliRunner

    return CliRunner()


# ---------------------------------------------------------------- the input as OUT


@pytest.mark.parametrize("command", ["convert", "reduce", "wrap"])
@pytest.mark.parametrize("how", ["same path", "symbolic link", "hard link"])
def test_the_input_given_as_out_is_refused_even_with_overwrite(runner, tmp_path, command, how):
    source = _source(command, tmp_path)
    digest = _digest(source)
    out = {"same path": source, "symbolic link": tmp_path / "link.h5", "hard link": tmp_path / "hard.h5"}[how]
    if how == "symbolic link":
        out.symlink_to(source.name)
    elif how == "hard link":
        os.link(source, out)
    result = runner.invoke(main, [*_command(command, source, out), "--overwrite"])
    line = _one_error_line(result)
    assert f"{out}: is the input file" in line and "not even with --overwrite" in line
    assert _digest(source) == digest and _digest(out) == digest
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".part")]


def test_build_refuses_its_geometry_file_as_out(runner, tmp_path, monkeypatch):
    geometry = tmp_path / "h2.xyz"
    geometry.write_text("2\n\nH 0 0 0\nH 0 0 0.74\n")
    os.link(geometry, tmp_path / "h2.h5")
    monkeypatch.setattr("integrity.producers.build", _no_scf)
    args = ["build", str(tmp_path / "h2.h5"), "--geometry", str(geometry), "--basis-set", "sto-3g", "--overwrite"]
    assert "is the input file" in _one_error_line(runner.invoke(main, args))


def _no_scf(*args, **kwargs):
    raise AssertionError("the SCF ran before OUT was checked")


# ---------------------------------------------------------------- OUT itself


@pytest.mark.parametrize("command", ["convert", "reduce", "wrap", "build"])
@pytest.mark.parametrize("overwrite", [False, True])
def test_a_dangling_symbolic_link_as_out_is_refused_before_any_work(runner, tmp_path, monkeypatch, command, overwrite):
    monkeypatch.setattr("integrity.producers.build", _no_scf)
    out = tmp_path / "out.h5"
    out.symlink_to(tmp_path / "nowhere.h5")
    args = (
        ["build", str(out), *BUILD_OPTIONS]
        if command == "build"
        else _command(command, _source(command, tmp_path), out)
    )
    line = _one_error_line(runner.invoke(main, [*args, *(["--overwrite"] if overwrite else [])]))
    assert f"{out}: is a symbolic link to" in line and "which does not exist" in line
    assert out.is_symlink() and not (tmp_path / "nowhere.h5").exists()


@pytest.mark.parametrize("command", ["convert", "reduce", "wrap", "build"])
@pytest.mark.parametrize(
    ("out", "message"),
    [
        ("missing/out.h5", "folder '{tmp}/missing' does not exist"),
        ("/proc/x.h5", "cannot create a file in folder '/proc': "),
        ("exists.h5", "exists; give --overwrite to replace it"),
    ],
)
def test_an_out_that_cannot_be_written_is_one_line_before_any_work(
    runner, tmp_path, monkeypatch, command, out, message
):
    if out.startswith("/proc") and not Path("/proc/self").exists():
        pytest.skip("needs /proc")
    monkeypatch.setattr("integrity.producers.build", _no_scf)
    monkeypatch.setattr(importlib.import_module("integrity.convert.files"), "load", _no_scf)
    (tmp_path / "exists.h5").write_text("keep")
    target = out if out.startswith("/") else str(tmp_path / out)
    args = (
        ["build", target, *BUILD_OPTIONS]
        if command == "build"
        else _command(command, _source(command, tmp_path), target)
    )
    line = _one_error_line(runner.invoke(main, args))
    assert line.startswith(f"error: {target}: ") and message.format(tmp=tmp_path) in line
    assert (tmp_path / "exists.h5").read_text() == "keep"


# ---------------------------------------------------------------- the system refuses during the write


def _limited_file_size(limit: int):
    def preexec():
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)  # so a write beyond the limit fails with EFBIG
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))

    return preexec


@pytest.mark.slow
@pytest.mark.parametrize(("command", "suffix"), [("convert", ".h5"), ("convert", ".json"), ("wrap", ".h5")])
def test_a_file_size_limit_is_one_line_with_no_file_left(tmp_path, command, suffix):
    """RLIMIT_FSIZE stands for a full disk: the write fails with EFBIG part way through."""
    if command == "wrap":
        source = _arrays(tmp_path / "in.npz", n=12)
    else:
        source = tmp_path / "in.h5"
        save(random_hamiltonian("restricted", 12, seed=3), source)
    digest = _digest(source)
    out = tmp_path / f"out{suffix}"
    limit = 64 * 1024  # the arrays take 170 KB
    assert source.stat().st_size > limit or command == "wrap"
    result = subprocess.run(
        [sys.executable, "-m", "integrity", *_command(command, source, out)],
        capture_output=True,
        text=True,
        preexec_fn=_limited_file_size(limit),
        timeout=600,
    )
    assert result.returncode == 2, result.stderr
    assert result.stderr.strip() == f"error: {out}: cannot write it: {os.strerror(27)}"
    assert sorted(p.name for p in tmp_path.iterdir()) == [source.name]
    assert _digest(source) == digest


@pytest.mark.skipif(os.geteuid() == 0, reason="root ignores permissions")
@pytest.mark.parametrize("command", ["convert", "wrap"])
def test_a_read_only_folder_is_one_line_naming_the_reason(runner, tmp_path, command):
    source = _source(command, tmp_path)
    folder = tmp_path / "ro"
    folder.mkdir()
    folder.chmod(0o500)
    try:
        line = _one_error_line(runner.invoke(main, _command(command, source, folder / "out.h5")))
        assert line == f"error: {folder / 'out.h5'}: cannot create a file in folder '{folder}': Permission denied"
        assert list(folder.iterdir()) == []
    finally:
        folder.chmod(0o700)


@pytest.mark.skipif(shutil.which("chattr") is None, reason="needs chattr")
@pytest.mark.parametrize("command", ["convert", "wrap"])
def test_a_folder_that_takes_no_new_file_is_one_line_even_for_root(runner, tmp_path, command):
    """An immutable folder (chattr +i) refuses new files to every user, root included."""
    source = _source(command, tmp_path)
    folder = tmp_path / "locked"
    folder.mkdir()
    if subprocess.run(["chattr", "+i", str(folder)], capture_output=True).returncode != 0:
        pytest.skip("this file system or user cannot make a folder immutable")
    try:
        line = _one_error_line(runner.invoke(main, _command(command, source, folder / "out.h5")))
        assert line == (f"error: {folder / 'out.h5'}: cannot create a file in folder '{folder}': {os.strerror(1)}")
        assert list(folder.iterdir()) == []
    finally:
        subprocess.run(["chattr", "-i", str(folder)], check=True)


# ---------------------------------------------------------------- two writers, one OUT


@pytest.mark.slow
@pytest.mark.parametrize("suffix", [".h5", ".json"])
def test_two_converts_to_one_out_at_once_one_wins_the_other_says_so(tmp_path, suffix):
    source = tmp_path / "in.h5"
    save(random_hamiltonian("restricted", 14, seed=5), source)
    out = tmp_path / f"out{suffix}"
    processes = [
        subprocess.Popen(
            [sys.executable, "-m", "integrity", "convert", str(source), str(out), "--notation", notation],
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )
        for notation in ("physicist", "chemist")
    ]
    results = [(p.wait(timeout=600), p.communicate()[1]) for p in processes]
    winners = [i for i, (status, _) in enumerate(results) if status == 0]
    losers = [i for i, (status, _) in enumerate(results) if status != 0]
    assert len(winners) == 1 and len(losers) == 1, results
    status, stderr = results[losers[0]]
    assert status == 2 and stderr.strip() == f"error: {out}: exists; give --overwrite to replace it"
    written = load(out)
    assert written.checksum == fingerprint(written)
    assert written.two_electron.notation == ("physicist", "chemist")[winners[0]]
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([source.name, out.name])
