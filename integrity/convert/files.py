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

from collections.abc import Callable
from pathlib import Path

from integrity.convert.history import dated, step_entry, with_history
from integrity.convert.pipeline import ConversionResult, convert, planned_size
from integrity.convert.reduce import reduce_active_space
from integrity.errors import BudgetError, IntegrityError
from integrity.io import DEFAULT_MEMORY, container_of, format_bytes, load, save
from integrity.io.atomic import require_output
from integrity.model.fingerprint import fingerprint


def convert_file(
    in_path,
    out_path,
    *,
    overwrite: bool = False,
    memory: int = DEFAULT_MEMORY,
    date: str | None = None,
    on_plan: Callable[[dict], None] | None = None,
    **steps,
) -> ConversionResult:
    """Convert the file ``in_path`` into ``out_path``; ``steps`` are :func:`convert`'s keywords.

    ``date`` (YYYY-MM-DD) dates the history entries; today, UTC, when None.

    Returns the result as written (its ``hamiltonian.checksum`` is the one
    stored in ``out_path``). ``memory`` bounds what the input may declare, and
    the input and output arrays together (a conversion holds both): beyond it
    the conversion is refused with the figures, before anything is computed.
    ``on_plan`` is called with :func:`planned_size`'s figures once they are known.
    """

    def transform(ham):
        require_budget(planned_size(ham, **steps), memory, out_path, on_plan)
        return convert(ham, date=date, **steps)

    return transform_file(in_path, out_path, transform, overwrite=overwrite, memory=memory, date=date)


def require_budget(size: dict, memory: int, out_path, on_plan=None) -> None:
    """Refuse a conversion whose input and output arrays together exceed ``memory``, with the figures;
    otherwise tell ``on_plan`` the sizes."""
    needed = size["input"] + size["output"]
    if needed > memory:
        ratio = ""
        if size["input"]:
            ratio = f" ({size['output'] / size['input']:.3g}x the input's {format_bytes(size['input'])})"
        raise BudgetError(
            None,
            f"the converted arrays hold {format_bytes(size['output'])}{ratio}; with the input that is "
            f"{format_bytes(needed)} in memory, beyond the budget of {format_bytes(memory)} (--memory)",
            str(out_path),
            needed=needed,
            budget=memory,
        )
    if on_plan is not None:
        on_plan(size)


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

    The guards of every command that writes a new file from an old one, run
    before the input is read (:func:`integrity.io.atomic.require_output`): the
    output is never the input (not even with ``overwrite``), an existing output
    is kept unless ``overwrite``, its folder must take a new file; the write is
    atomic, and a container change is one more history entry.
    """
    in_path, out_path = Path(in_path), Path(out_path)
    container_of(out_path)
    require_output(out_path, overwrite=overwrite, inputs=[in_path])
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
