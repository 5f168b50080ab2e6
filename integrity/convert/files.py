"""``convert_file`` and ``reduce_file``: read a file, convert it (or cut an active space out of it),
write another (HDF5 or JSON by extension).

The input is never overwritten: an output that resolves to the input file
(the same path, a symbolic link to it, or a hard link) is refused even with
``overwrite``. An existing output is refused unless ``overwrite``,
and the output is written atomically by :func:`integrity.io.save`. A
container change (``.h5`` <-> ``.json``) is one more history entry; it
changes nothing in the content, so not the fingerprint. JSON cannot hold NaN
or infinities: writing such a Hamiltonian to ``.json`` is refused naming the
element (by :mod:`integrity.io.jsonfile`).

>>> import pathlib, tempfile, numpy as np
>>> from integrity.io import load, save
>>> from integrity.model.hamiltonian import Hamiltonian, Orbitals, Electrons, TwoElectron
>>> folder = pathlib.Path(tempfile.mkdtemp())
>>> save(Hamiltonian(Orbitals(1, "restricted"), Electrons(1, 1), 0.0, np.array([[-1.0]]),
...                  TwoElectron(np.array([[[[0.5]]]]), notation="chemist")), folder / "h.h5")
>>> result = convert_file(folder / "h.h5", folder / "h.json", notation="physicist")
>>> [step["step"] for step in result.steps], load(folder / "h.json").two_electron.notation
(['notation', 'container'], 'physicist')
"""

from __future__ import annotations

import os
from pathlib import Path

from integrity.convert.history import dated, step_entry, with_history
from integrity.convert.pipeline import ConversionResult, convert
from integrity.convert.reduce import reduce_active_space
from integrity.errors import IntegrityError, RefusedError
from integrity.io import DEFAULT_MEMORY, container_of, load, save
from integrity.model.fingerprint import fingerprint


def _same_file(first: Path, second: Path) -> bool:
    if first.resolve() == second.resolve():
        return True
    try:
        return os.path.samefile(first, second)
    except OSError:
        return False


def convert_file(
    in_path, out_path, *, overwrite: bool = False, memory: int = DEFAULT_MEMORY, date: str | None = None, **steps
) -> ConversionResult:
    """Convert the file ``in_path`` into ``out_path``; ``steps`` are :func:`convert`'s keywords.

    ``date`` (YYYY-MM-DD) dates the history entries; today, UTC, when None.

    Returns the result as written (its ``hamiltonian.checksum`` is the one
    stored in ``out_path``). ``memory`` bounds what the input may declare.
    """
    return transform_file(
        in_path, out_path, lambda ham: convert(ham, date=date, **steps), overwrite=overwrite, memory=memory, date=date
    )


def reduce_file(
    in_path,
    out_path,
    *,
    frozen=(),
    active=None,
    overwrite: bool = False,
    memory: int = DEFAULT_MEMORY,
    date: str | None = None,
    **options,
) -> ConversionResult:
    """Cut an active space out of the file ``in_path`` into ``out_path`` (see :mod:`integrity.convert.reduce`);
    ``options`` are :func:`reduce_active_space`'s keywords."""
    return transform_file(
        in_path,
        out_path,
        lambda ham: reduce_active_space(ham, frozen, active, date=date, memory=memory, **options),
        overwrite=overwrite,
        memory=memory,
        date=date,
    )


def transform_file(
    in_path, out_path, transform, *, overwrite: bool = False, memory: int = DEFAULT_MEMORY, date: str | None = None
) -> ConversionResult:
    """Read ``in_path``, apply ``transform`` (Hamiltonian -> ConversionResult), write ``out_path``.

    The guards of every command that writes a new file from an old one: the
    output is never the input (not even with ``overwrite``), an existing output
    is kept unless ``overwrite``, the write is atomic, and a container change
    is one more history entry.
    """
    in_path, out_path = Path(in_path), Path(out_path)
    if _same_file(in_path, out_path):
        raise RefusedError(
            None,
            f"the output {out_path} is the input file {in_path}; a conversion "
            "never overwrites its input (not even with --overwrite), write to a new path",
            str(out_path),
        )
    source, target = container_of(in_path), container_of(out_path)
    ham = load(in_path, memory=memory)
    try:
        result = transform(ham)
    except IntegrityError as err:
        raise err.in_file(in_path) from None
    written, entries = result.hamiltonian, list(result.steps)
    if source != target:
        (entry,) = dated([step_entry("container", source, target, fingerprint_changed=False)], date)
        written, entries = with_history(written, [entry]), [*entries, entry]
    written = written.replace(checksum=fingerprint(written))
    save(written, out_path, overwrite=overwrite, fingerprint_checksum=False)
    return ConversionResult(written, tuple(entries))
