"""Write a file so that no interruption leaves a half file under its name, and no write replaces what it must not.

Conventions:

* **The output guard** (:func:`require_output`) is the one check every command that writes runs
  before any expensive work: the output is not one of the inputs (compared by device and inode, so a
  symbolic or hard link to an input is caught; refused even with ``overwrite``), is not a dangling
  symbolic link (refused with its own message: writing through it or replacing it would both be a
  guess), is not a folder, does not exist unless ``overwrite``, and its folder exists and takes a new
  file (a probe file is created and removed). Each refusal is one :class:`~integrity.errors.IntegrityError`.
* **The temporary file** is ``.NAME.PID@HOST.TOKEN.part`` in the target's folder (same file
  system, so publishing is a rename or a link): PID is the writing process, HOST its host name
  (characters other than letters, digits, ``.`` and ``-`` written ``-``), TOKEN eight random hex
  digits. The data is written there and synced to disk before it is published.
* **Publishing** without ``overwrite`` is a hard link to the target followed by removing the
  temporary name: the link fails if the target appeared meanwhile (another process won the race), so
  an existing file is never replaced by accident. With ``overwrite`` it is :func:`os.replace` (a
  symbolic link given as the target is replaced, not written through).
* **Stale temporary files.** SIGKILL cannot be caught, so a killed writer leaves its ``.part`` file.
  Every write and every guard (even one that then refuses) first removes, in the folder it writes
  to, the ``.part`` files of this naming whose owner is provably dead: same host name and
  :func:`os.kill` ``(pid, 0)`` raises ProcessLookupError. Files of other hosts, of live
  processes, or of another naming are left alone.
* **Operating-system errors** (permission denied, read-only file system, no space left, a file-size
  limit) become one :class:`~integrity.errors.OutputError` naming the path and the reason
  (``strerror``); the temporary file is removed and the target is untouched.
"""

from __future__ import annotations

import contextlib
import errno
import os
import re
import secrets
import socket
from pathlib import Path

from integrity.errors import IntegrityError, OutputError, OverwriteError, RefusedError

PART_SUFFIX = ".part"
_PART_NAME = re.compile(
    r"^\.(?P<name>.+)\.(?P<pid>[0-9]+)@(?P<host>[A-Za-z0-9.-]+)\.(?P<token>[0-9a-f]{8})"
    + re.escape(PART_SUFFIX)
    + r"\Z",
    re.DOTALL,  # a file name may hold a newline
)
_NAME_KEPT = 100  # bytes of the target's name kept in a temporary name (a name holds at most 255 bytes)
_NO_HARD_LINKS = {
    errno.EPERM,
    errno.EMLINK,
    errno.ENOSYS,
    errno.EOPNOTSUPP,
    getattr(errno, "ENOTSUP", errno.EOPNOTSUPP),
}
_EXISTS = "exists; give --overwrite to replace it"


def host_name() -> str:
    """This machine's name as written in temporary names: letters, digits, ``.`` and ``-``, at most 64 characters."""
    return re.sub(r"[^A-Za-z0-9.-]", "-", socket.gethostname())[:64] or "localhost"


def temporary_name(target_name: str) -> str:
    """A fresh temporary name for ``target_name`` owned by this process.

    >>> name = temporary_name("h2.h5")
    >>> part_owner(name) == (host_name(), os.getpid())
    True
    """
    kept = os.fsdecode(os.fsencode(target_name)[:_NAME_KEPT])
    return f".{kept}.{os.getpid()}@{host_name()}.{secrets.token_hex(4)}{PART_SUFFIX}"


def part_owner(name: str) -> tuple[str, int] | None:
    """``(host, pid)`` of a temporary name of this module's naming, else None.

    >>> part_owner(".water.h5.4242@node7.cluster.3fa9c2d1.part")
    ('node7.cluster', 4242)
    >>> part_owner(".water.h5.x3Yq9_ab.part") is None  # another naming: never removed
    True
    """
    match = _PART_NAME.match(name)
    return (match["host"], int(match["pid"])) if match else None


def process_is_dead(pid: int) -> bool:
    """True only when no process ``pid`` exists on this machine (a live process of another user counts as alive)."""
    if pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    except OSError:  # PermissionError: it exists, owned by someone else
        return False
    return False


def is_stale(name: str) -> bool:
    """A temporary file of this naming whose writer is provably dead: this host, no such process."""
    owner = part_owner(name)
    if owner is None:
        return False
    host, pid = owner
    return host == host_name() and pid != os.getpid() and process_is_dead(pid)


def remove_stale_parts(folder) -> list[Path]:
    """Remove the stale temporary files (:func:`is_stale`) directly in ``folder``; return those removed.

    Regular files only; one that cannot be listed or removed is left where it is.
    """
    removed = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        if not entry.name.endswith(PART_SUFFIX) or not is_stale(entry.name):
            continue
        with contextlib.suppress(OSError):
            if entry.is_file(follow_symlinks=False):
                os.unlink(entry.path)
                removed.append(Path(entry.path))
    return removed


def same_file(first, second) -> bool:
    """Whether two paths name one file: equal after resolving links, or the same device and inode."""
    first, second = Path(first), Path(second)
    if first.resolve() == second.resolve():
        return True
    try:
        return os.path.samefile(first, second)
    except OSError:
        return False


def require_output(path, *, overwrite: bool = False, inputs=()) -> Path:
    """The output guard: refuse ``path`` as an output, in one line, before any work is done.

    ``inputs`` are the files the command reads; the output may be none of them,
    even with ``overwrite``. Stale temporary files in the folder are removed,
    and a probe file proves the folder takes a new file.

    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "in.h5").write_text("data")
    >>> require_output(folder / "out.h5", inputs=[folder / "in.h5"]).name
    'out.h5'
    >>> require_output(folder / "in.h5", overwrite=True, inputs=[folder / "in.h5"])
    Traceback (most recent call last):
    ...
    integrity.errors.RefusedError: ...in.h5: is the input file ...; a command never overwrites its input ...
    """
    target = Path(path)
    for source in inputs:
        if same_file(source, target):
            link = ""
            if target.is_symlink():
                link = " (OUT is a symbolic link to it)"
            elif target.resolve() != Path(source).resolve():
                link = " (OUT is a hard link to it)"
            raise RefusedError(
                None,
                f"is the input file {str(source)!r}{link}; a command never overwrites its input "
                "(not even with --overwrite), write to a new path",
                str(target),
            )
    remove_stale_parts(_folder_of(target))
    folder = _check_target(target, overwrite)
    probe = _create_temporary(folder, target)
    with contextlib.suppress(OSError):
        probe.unlink()
    return target


@contextlib.contextmanager
def atomic_output(path, *, overwrite: bool = False):
    """Yield a temporary path next to ``path``; when the block ends without error, publish it as ``path``.

    Any error (or Ctrl-C) in the block removes the temporary file and leaves
    ``path`` as it was. Operating-system errors become :class:`OutputError`.

    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> with atomic_output(folder / "a.txt") as tmp:
    ...     _ = tmp.write_text("hello")
    >>> (folder / "a.txt").read_text()
    'hello'
    >>> with atomic_output(folder / "a.txt") as tmp:
    ...     _ = tmp.write_text("again")
    Traceback (most recent call last):
    ...
    integrity.errors.OverwriteError: ...a.txt: exists; give --overwrite to replace it
    >>> sorted(p.name for p in folder.iterdir())
    ['a.txt']
    """
    target = Path(path)
    remove_stale_parts(_folder_of(target))
    folder = _check_target(target, overwrite)
    tmp = _create_temporary(folder, target)
    try:
        try:
            yield tmp
            _flush_to_disk(tmp)
            if overwrite:
                os.replace(tmp, target)
            else:
                _move_without_clobbering(tmp, target)
        except IntegrityError:
            raise
        except (OSError, RuntimeError) as err:
            # the system's refusals carry an errno (HDF5 quotes it in its text, and reports a failed
            # write while closing as RuntimeError); anything else (a damaged input read during the
            # write) passes unchanged, so it is not reported as a failure to write
            if getattr(err, "errno", None) is None and _errno_in_text(str(err)) is None:
                raise
            raise _write_error(err, target) from err
        _flush_folder(folder)
    finally:
        with contextlib.suppress(OSError):
            tmp.unlink()


def _folder_of(target: Path) -> Path:
    return target.parent if str(target.parent) else Path(".")


def _check_target(target: Path, overwrite: bool) -> Path:
    """The target's own refusals (dangling link, folder, existing, no folder); return its folder."""
    if target.is_symlink() and not target.exists():
        raise OutputError(
            None,
            f"is a symbolic link to {os.readlink(target)!r}, which does not exist; refused (writing through it "
            "or replacing it would be a guess), give a path that is not a dangling link",
            str(target),
        )
    if target.is_dir():
        raise OutputError(None, "is a folder; give a file name", str(target))
    if target.exists() and not overwrite:
        raise OverwriteError(None, _EXISTS, str(target))
    folder = _folder_of(target)
    if not folder.exists():
        raise OutputError(None, f"folder {str(folder)!r} does not exist", str(target))
    if not folder.is_dir():
        raise OutputError(None, f"{str(folder)!r} is not a folder", str(target))
    return folder


def _create_temporary(folder: Path, target: Path) -> Path:
    """Create an empty temporary file of this process in ``folder`` (mode 0666 less the umask)."""
    flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_CLOEXEC", 0)
    for _ in range(100):
        tmp = folder / temporary_name(target.name)
        try:
            os.close(os.open(tmp, flags, 0o666))
        except FileExistsError:
            continue
        except OSError as err:
            raise OutputError(
                None, f"cannot create a file in folder {str(folder)!r}: {_reason(err)}", str(target)
            ) from err
        return tmp
    raise OutputError(None, f"cannot create a temporary file in folder {str(folder)!r}", str(target))


def _reason(err: Exception) -> str:
    """The operating system's sentence for ``err`` (``strerror``), else its text."""
    if getattr(err, "strerror", None):
        return err.strerror
    number = getattr(err, "errno", None) or _errno_in_text(str(err))
    return os.strerror(number) if number else str(err)


def _errno_in_text(text: str) -> int | None:
    """The errno HDF5 quotes in its messages (``errno = 28``), if any."""
    match = re.search(r"errno = ([0-9]+)", text)
    return int(match[1]) if match else None


def _write_error(err: Exception, target: Path) -> OutputError:
    return OutputError(None, f"cannot write it: {_reason(err)}", str(target))


def _flush_to_disk(path: Path) -> None:
    with open(path, "rb") as handle:
        os.fsync(handle.fileno())


def _flush_folder(folder: Path) -> None:
    """Sync the folder so the new name survives a power cut (where the system allows it)."""
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


def _move_without_clobbering(tmp: Path, target: Path) -> None:
    try:
        os.link(tmp, target)
    except FileExistsError:
        raise OverwriteError(None, _EXISTS, str(target)) from None
    except OSError as err:
        if err.errno not in _NO_HARD_LINKS:
            raise
        # a file system without hard links: the exists() test is the guard (a narrow window remains)
        if target.exists() or target.is_symlink():
            raise OverwriteError(None, _EXISTS, str(target)) from None
        os.replace(tmp, target)
