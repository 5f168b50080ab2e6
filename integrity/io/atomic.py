"""Write a file so that an interrupted write never leaves a half file under its name.

The data goes to a hidden temporary file in the target folder (same file
system, so the final step is a rename), is flushed to disk, then moved into
place. Without ``overwrite`` the move is a hard link, which fails if the target
appeared meanwhile, so an existing file is never replaced by accident.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path

from integrity.errors import ContainerError, OverwriteError


@contextlib.contextmanager
def atomic_output(path, *, overwrite: bool = False):
    """Yield a temporary path next to ``path``; on success move it to ``path``.

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
    """
    target = Path(path)
    if target.exists() and not overwrite:
        raise OverwriteError(None, "exists; give --overwrite to replace it", str(target))
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise ContainerError(None, f"folder {str(folder)!r} does not exist", str(target))
    fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=folder)
    os.close(fd)
    tmp = Path(tmp_name)
    os.chmod(tmp, 0o666 & ~_umask())  # mkstemp makes 0600; a data file follows the user's umask
    try:
        yield tmp
        _flush_to_disk(tmp)
        if overwrite:
            os.replace(tmp, target)
        else:
            _move_without_clobbering(tmp, target)
    finally:
        with contextlib.suppress(FileNotFoundError):
            tmp.unlink()


def _umask() -> int:
    current = os.umask(0)
    os.umask(current)
    return current


def _flush_to_disk(path: Path) -> None:
    with open(path, "rb") as handle:
        os.fsync(handle.fileno())


def _move_without_clobbering(tmp: Path, target: Path) -> None:
    try:
        os.link(tmp, target)
    except FileExistsError:
        raise OverwriteError(None, "exists; give --overwrite to replace it", str(target)) from None
    except OSError:
        # file systems without hard links: the exists() test above is the guard
        if target.exists():
            raise OverwriteError(None, "exists; give --overwrite to replace it", str(target)) from None
        os.replace(tmp, target)
