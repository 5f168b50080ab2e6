"""The output guard, temporary names, stale temporaries and operating-system errors of :mod:`integrity.io.atomic`."""

from __future__ import annotations

import errno
import os
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from integrity.errors import OutputError, OverwriteError, RefusedError
from integrity.io import atomic
from integrity.io.atomic import (
    atomic_output,
    host_name,
    part_owner,
    remove_stale_parts,
    require_output,
    temporary_name,
)


def _dead_pid() -> int:
    """A process id no process can have: above the system's largest."""
    try:
        return int(Path("/proc/sys/kernel/pid_max").read_text()) + 1
    except OSError:
        return 2**22 + 1


def _part(folder: Path, pid: int, host: str | None = None, name: str = "out.h5") -> Path:
    path = folder / f".{name}.{pid}@{host or host_name()}.0123abcd.part"
    path.write_text("half")
    return path


# ---------------------------------------------------------------- temporary names and stale files


@pytest.mark.parametrize(
    "name", ["h2.h5", "a.b@c.d.json", "x" * 250 + ".h5", "with space.h5", ".hidden.h5", "é" * 120 + ".h5", "a\nb.h5"]
)
def test_a_temporary_name_names_its_owner_and_fits_a_file_name(name):
    tmp = temporary_name(name)
    assert part_owner(tmp) == (host_name(), os.getpid())
    assert tmp.startswith(".") and tmp.endswith(".part")
    assert len(os.fsencode(tmp)) <= 255


@given(st.text(st.characters(blacklist_characters="/\x00", blacklist_categories=("Cs",)), min_size=1, max_size=300))
def test_every_temporary_name_is_read_back_as_this_process_s(name):
    tmp = temporary_name(name)
    assert part_owner(tmp) == (host_name(), os.getpid())
    assert "/" not in tmp and "\x00" not in tmp and len(os.fsencode(tmp)) <= 255


def test_the_temporary_file_of_a_write_carries_this_process_id(tmp_path):
    with atomic_output(tmp_path / "out.h5") as tmp:
        assert part_owner(tmp.name) == (host_name(), os.getpid())
        tmp.write_text("data")


def test_only_temporaries_of_dead_writers_on_this_host_are_removed(tmp_path):
    dead = _part(tmp_path, _dead_pid())
    dead_other_name = _part(tmp_path, _dead_pid(), name="another.json")
    alive = _part(tmp_path, os.getppid())  # our parent: alive
    mine = _part(tmp_path, os.getpid())
    other_host = _part(tmp_path, _dead_pid(), host="elsewhere.example")
    foreign = tmp_path / ".out.h5.x3Yq9_ab.part"  # another naming (an older version, another program)
    foreign.write_text("half")
    plain = tmp_path / "notes.part"
    plain.write_text("mine")
    folder_like = tmp_path / f".d.h5.{_dead_pid()}@{host_name()}.0123abcd.part"
    folder_like.mkdir()

    assert sorted(remove_stale_parts(tmp_path)) == sorted([dead, dead_other_name])
    left = {p.name for p in tmp_path.iterdir()}
    assert left == {p.name for p in (alive, mine, other_host, foreign, plain, folder_like)}


def test_a_write_and_a_refused_write_both_clear_stale_temporaries(tmp_path):
    _part(tmp_path, _dead_pid())
    (tmp_path / "out.h5").write_text("exists")
    with pytest.raises(OverwriteError):
        require_output(tmp_path / "out.h5")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.h5"]
    _part(tmp_path, _dead_pid())
    with atomic_output(tmp_path / "new.h5") as tmp:
        tmp.write_text("data")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["new.h5", "out.h5"]


# ---------------------------------------------------------------- the output guard


def test_the_input_is_refused_as_output_by_path_symbolic_link_and_hard_link(tmp_path):
    source = tmp_path / "in.h5"
    source.write_text("input")
    (tmp_path / "soft.h5").symlink_to(source)
    os.link(source, tmp_path / "hard.h5")
    (tmp_path / "sub").mkdir()
    cases = {
        source: "",
        tmp_path / "soft.h5": " (OUT is a symbolic link to it)",
        tmp_path / "hard.h5": " (OUT is a hard link to it)",
        tmp_path / "sub" / ".." / "in.h5": "",
    }
    for out, link in cases.items():
        with pytest.raises(RefusedError, match=r"not even with --overwrite") as caught:
            require_output(out, overwrite=True, inputs=[source])
        assert f"{out}: is the input file {str(source)!r}{link};" in str(caught.value)
    assert source.read_text() == "input"


def test_a_dangling_symbolic_link_is_refused_with_its_own_message_even_with_overwrite(tmp_path):
    link = tmp_path / "out.h5"
    link.symlink_to(tmp_path / "missing.h5")
    for overwrite in (False, True):
        with pytest.raises(OutputError, match=r"symbolic link to .*missing\.h5', which does not exist"):
            require_output(link, overwrite=overwrite)
        with pytest.raises(OutputError, match="which does not exist"), atomic_output(link, overwrite=overwrite):
            pass
    assert link.is_symlink() and not (tmp_path / "missing.h5").exists()


def test_a_symbolic_link_to_another_file_is_replaced_not_written_through(tmp_path):
    other = tmp_path / "other.h5"
    other.write_text("keep me")
    link = tmp_path / "out.h5"
    link.symlink_to(other)
    with pytest.raises(OverwriteError):
        require_output(link)
    with atomic_output(link, overwrite=True) as tmp:
        tmp.write_text("new")
    assert not link.is_symlink() and link.read_text() == "new" and other.read_text() == "keep me"


@pytest.mark.parametrize(
    ("where", "message"),
    [
        ("missing/out.h5", "folder '.*missing' does not exist"),
        ("file.txt/out.h5", "file.txt' is not a folder"),
        ("sub", "is a folder"),
    ],
)
def test_outputs_that_cannot_be_files_are_one_error(tmp_path, where, message):
    (tmp_path / "file.txt").write_text("x")
    (tmp_path / "sub").mkdir()
    with pytest.raises(OutputError, match=message):
        require_output(tmp_path / where)


@pytest.mark.skipif(not Path("/proc/self").exists(), reason="needs /proc")
def test_a_folder_that_cannot_hold_files_is_found_by_the_guard():
    with pytest.raises(OutputError, match=r"/proc/x\.h5: cannot create a file in folder '/proc': "):
        require_output("/proc/x.h5")


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0, reason="root ignores permissions")
def test_a_read_only_folder_is_refused_naming_the_reason(tmp_path):
    folder = tmp_path / "ro"
    folder.mkdir()
    folder.chmod(0o500)
    try:
        with pytest.raises(OutputError, match="Permission denied"):
            require_output(folder / "out.h5")
        with pytest.raises(OutputError, match="Permission denied"), atomic_output(folder / "out.h5"):
            pass
        assert list(folder.iterdir()) == []
    finally:
        folder.chmod(0o700)


# ---------------------------------------------------------------- errors during the write


@pytest.mark.parametrize("code", [errno.ENOSPC, errno.EDQUOT, errno.EIO, errno.EROFS])
@pytest.mark.parametrize("overwrite", [False, True])
def test_an_os_error_while_syncing_is_one_error_and_leaves_nothing(tmp_path, monkeypatch, code, overwrite):
    target = tmp_path / "out.h5"
    if overwrite:
        target.write_text("previous")

    def failing(path):
        raise OSError(code, os.strerror(code))

    monkeypatch.setattr(atomic, "_flush_to_disk", failing)
    with pytest.raises(OutputError) as caught, atomic_output(target, overwrite=overwrite) as tmp:
        tmp.write_text("new")
    assert str(caught.value) == f"{target}: cannot write it: {os.strerror(code)}"
    assert sorted(p.name for p in tmp_path.iterdir()) == (["out.h5"] if overwrite else [])
    if overwrite:
        assert target.read_text() == "previous"


def test_an_hdf5_error_quoting_an_errno_is_one_error(tmp_path):
    message = "Can't decrement id ref count (unable to extend file properly, errno = 27, error message = 'x')"
    with pytest.raises(OutputError, match="cannot write it: File too large"), atomic_output(tmp_path / "o.h5"):
        raise RuntimeError(message)
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("error", [RuntimeError("a bug"), OSError("Can't read data (a bug)")])
def test_an_error_that_is_not_the_system_s_passes_unchanged(tmp_path, error):
    with pytest.raises(type(error), match="a bug"), atomic_output(tmp_path / "o.h5"):
        raise error
    assert list(tmp_path.iterdir()) == []


def test_a_temporary_file_removed_by_someone_else_fails_the_write_in_one_line(tmp_path):
    with pytest.raises(OutputError, match=r"out\.h5: cannot write it: No such file or directory"):
        with atomic_output(tmp_path / "out.h5") as tmp:
            tmp.write_text("data")
            tmp.unlink()  # what a cleaner that took this writer for dead would do
    assert list(tmp_path.iterdir()) == []


def test_a_file_system_without_hard_links_still_never_clobbers(tmp_path, monkeypatch):
    def no_links(src, dst):
        raise OSError(errno.EPERM, "Operation not permitted")

    monkeypatch.setattr(os, "link", no_links)
    with atomic_output(tmp_path / "a.h5") as tmp:
        tmp.write_text("first")
    assert (tmp_path / "a.h5").read_text() == "first"

    target = tmp_path / "b.h5"
    with pytest.raises(OverwriteError), atomic_output(target) as tmp:
        tmp.write_text("mine")
        target.write_text("appeared meanwhile")
    assert target.read_text() == "appeared meanwhile"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.h5", "b.h5"]
