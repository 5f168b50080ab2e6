"""The in-memory Hamiltonian: one value holding everything a file holds.

Field names follow the file format (``orbitals.count``, ``two_electron.notation``,
...), so an error names the same field a user sees in the file. Constructing a
:class:`Hamiltonian` checks structure (types, shapes, dtypes, enumerations,
index ranges) and raises :class:`~integrity.errors.FieldError` naming the field;
it does not judge physics (symmetry, positivity, electron counts against the
orbitals): that is the job of :mod:`integrity.checks`, which must be able to
report on such files.

Energy of a restricted chemist Hamiltonian::

    H = core_energy + sum_pq h[p,q] E_pq + 1/2 sum_pqrs (pq|rs) (E_pq E_rs - delta_qr E_ps)

>>> import numpy as np
>>> h = Hamiltonian(
...     orbitals=Orbitals(count=2, basis="restricted"),
...     electrons=Electrons(alpha=1, beta=1),
...     core_energy=0.5,
...     one_electron=np.eye(2),
...     two_electron=TwoElectron(np.zeros((2, 2, 2, 2)), notation="chemist"),
... )
>>> h.n, h.is_complex, h.electrons.total
(2, False, 2)
>>> Hamiltonian(
...     orbitals=Orbitals(count=4, basis="restricted"),
...     electrons=Electrons(1, 1), core_energy=0.0, one_electron=np.eye(4),
...     two_electron=TwoElectron(np.zeros((16, 16)), notation="chemist", storage="pairs"),
... )
Traceback (most recent call last):
...
integrity.errors.FieldError: two_electron: storage 'pairs' needs shape (10, 10) for 4 orbitals, got (16, 16)
"""

from __future__ import annotations

import dataclasses
import operator
import re
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from integrity.errors import FieldError
from integrity.model.indexing import (
    BASES,
    NOTATIONS,
    POINT_GROUP_ORDER,
    SPIN_LAYOUTS,
    STORAGES,
    one_electron_shape,
    two_electron_shape,
)

FORMAT_NAME = "integrity.hamiltonian"
FORMAT_VERSION = 1
ENERGY_UNIT = "hartree"
INTERACTIONS = ("coulomb", "model")
CHECKSUM_PATTERN = re.compile(r"^sha256:[0-9a-f]{64}$")


@dataclass(frozen=True)
class Orbitals:
    """The orbital basis. ``count`` is spatial orbitals (restricted, unrestricted)
    or spin orbitals (spin-orbital); ``irreps[p]`` is orbital p's irrep number
    (a product of irreps is the XOR of their numbers)."""

    count: int
    basis: str
    spin_layout: str | None = None
    point_group: str | None = None
    irreps: tuple[int, ...] | None = None
    canonical: bool | None = None

    @property
    def per_spin(self) -> int:
        """Orbitals available to each spin: count, or count/2 for spin orbitals."""
        return self.count // 2 if self.basis == "spin-orbital" else self.count


@dataclass(frozen=True)
class Electrons:
    """Electrons of each spin in the state the file (or a reference) describes."""

    alpha: int
    beta: int

    @property
    def total(self) -> int:
        return self.alpha + self.beta


@dataclass(frozen=True, eq=False)
class TwoElectron:
    """The two-electron array and how to read it.

    ``array`` is a NumPy array, or any array-like with ``shape``, ``dtype`` and
    slicing (an open ``h5py.Dataset`` when a large file is checked in blocks).
    ``interaction`` None means the key is absent (the default, Coulomb).
    """

    array: Any
    notation: str
    storage: str = "dense"
    interaction: str | None = None
    antisymmetrized: bool | None = None

    @property
    def is_coulomb(self) -> bool:
        return self.interaction in (None, "coulomb")


@dataclass(frozen=True)
class Reference:
    """An energy the Hamiltonian must reproduce (total, including core_energy).

    ``occupation`` is (alpha indices, beta indices) into the file's orbitals;
    ``electrons`` None means the file's own counts; ``root`` None means 0.
    """

    label: str
    method: str
    energy: float
    electrons: Electrons | None = None
    two_s: int | None = None
    irrep: int | None = None
    root: int | None = None
    occupation: tuple[tuple[int, ...], tuple[int, ...]] | None = None
    tolerance: float | None = None


@dataclass(frozen=True, eq=False)
class Hamiltonian:
    """Everything a Hamiltonian file holds (see ``docs/format.md``).

    ``one_electron``: (n, n), or (2, n, n) as [alpha, beta] when unrestricted.
    ``two_electron.array``: by storage, see :func:`integrity.model.indexing.two_electron_shape`.
    Values are float64 or complex128 in any byte order.
    """

    orbitals: Orbitals
    electrons: Electrons
    core_energy: float
    one_electron: Any
    two_electron: TwoElectron
    core_energy_parts: Mapping[str, float] | None = None
    references: tuple[Reference, ...] = ()
    title: str | None = None
    provenance: Mapping[str, Any] | None = None
    checksum: str | None = None
    format_version: int = FORMAT_VERSION
    energy_unit: str = ENERGY_UNIT

    def __post_init__(self):
        first = next(structure_problems(self), None)
        if first is not None:
            raise FieldError(*first)

    @property
    def n(self) -> int:
        return self.orbitals.count

    @property
    def basis(self) -> str:
        return self.orbitals.basis

    @property
    def is_complex(self) -> bool:
        """True when either array holds complex values (dtype, not content)."""
        return _kind(self.one_electron) == "c" or _kind(self.two_electron.array) == "c"

    def replace(self, **changes) -> Hamiltonian:
        """A copy with some fields replaced (validated again)."""
        return dataclasses.replace(self, **changes)

    def reference(self, label: str) -> Reference:
        for ref in self.references:
            if ref.label == label:
                return ref
        labels = ", ".join(r.label for r in self.references) or "none"
        raise FieldError("references", f"no reference labelled {label!r}; the file has: {labels}")

    def electrons_of(self, ref: Reference) -> Electrons:
        """The electron counts a reference applies to (its own, or the file's)."""
        return ref.electrons if ref.electrons is not None else self.electrons


def _kind(array) -> str:
    return np.dtype(array.dtype).kind


def _dtype_problem(name: str, array) -> str | None:
    dtype = getattr(array, "dtype", None)
    if dtype is None or getattr(array, "shape", None) is None:
        return f"expected an array, got {type(array).__name__}"
    dtype = np.dtype(dtype)
    if (dtype.kind, dtype.itemsize) not in (("f", 8), ("c", 16)):
        return f"dtype {dtype} is not allowed; {name} must be float64 or complex128"
    return None


def shape_problems(
    *,
    basis: str,
    count: int,
    storage: str,
    notation: str,
    one_shape,
    one_dtype,
    two_shape,
    two_dtype,
) -> Iterator[tuple[str, str]]:
    """(field, reason) for every disagreement of shapes and dtypes with the declared
    basis, orbital count, notation and storage. Used by the model and by the
    ``arrays.shape`` check, so both say the same thing."""
    if basis not in BASES or not isinstance(count, int) or count < 1:
        return
    for name, dtype in (("one_electron", one_dtype), ("two_electron", two_dtype)):
        dtype = np.dtype(dtype)
        if (dtype.kind, dtype.itemsize) not in (("f", 8), ("c", 16)):
            yield name, f"dtype {dtype} is not allowed; {name} must be float64 or complex128"
    expected_one = one_electron_shape(basis, count)
    if tuple(one_shape) != expected_one:
        yield (
            "one_electron",
            f"basis {basis!r} needs shape {expected_one} for {count} orbitals, got {tuple(one_shape)}",
        )
    if storage not in STORAGES:
        return
    if storage != "dense" and notation == "physicist":
        yield (
            "two_electron.storage",
            f"storage {storage!r} is defined for chemist notation only; physicist arrays are dense",
        )
    if storage != "dense" and np.dtype(two_dtype).kind == "c":
        yield "two_electron.storage", f"storage {storage!r} is defined for real values only; complex arrays are dense"
    try:
        expected_two = two_electron_shape(basis, count, storage)
    except FieldError as err:
        yield err.field, err.reason
        return
    if tuple(two_shape) != expected_two:
        yield (
            "two_electron",
            f"storage {storage!r} needs shape {expected_two} for {count} orbitals, got {tuple(two_shape)}",
        )


def _int_problem(value, minimum=0, maximum=None) -> str | None:
    if isinstance(value, bool | float) or not _is_int(value):
        return f"expected an integer, got {value!r}"
    value = operator.index(value)
    if value < minimum or (maximum is not None and value > maximum):
        bound = f"{minimum}..{maximum}" if maximum is not None else f">= {minimum}"
        return f"{value} is outside {bound}"
    return None


def _is_int(value) -> bool:
    try:
        operator.index(value)
    except TypeError:
        return False
    return True


def _float_problem(value) -> str | None:
    if isinstance(value, bool) or not isinstance(value, int | float | np.floating | np.integer):
        return f"expected a number, got {value!r}"
    return None


def structure_problems(ham: Hamiltonian) -> Iterator[tuple[str, str]]:
    """(field, reason) for every structural fault of a Hamiltonian, in file order."""
    orb = ham.orbitals
    if ham.format_version != FORMAT_VERSION:
        yield "format_version", f"version {ham.format_version!r} is not supported; this reader knows {FORMAT_VERSION}"
    if ham.energy_unit != ENERGY_UNIT:
        yield "energy_unit", f"{ham.energy_unit!r} is not supported; energies must be in {ENERGY_UNIT!r}"
    if ham.title is not None and not isinstance(ham.title, str):
        yield "title", f"expected a string, got {ham.title!r}"
    problem = _int_problem(orb.count, minimum=1)
    if problem:
        yield "orbitals.count", problem
        return
    if orb.basis not in BASES:
        yield "orbitals.basis", f"{orb.basis!r} is not a basis; expected one of {BASES}"
        return
    if orb.basis == "spin-orbital":
        if orb.spin_layout not in SPIN_LAYOUTS:
            yield (
                "orbitals.spin_layout",
                f"spin-orbital files need spin_layout in {SPIN_LAYOUTS}, got {orb.spin_layout!r}",
            )
        if orb.count % 2:
            yield "orbitals.count", f"a spin-orbital basis needs an even number of spin orbitals, got {orb.count}"
    elif orb.spin_layout is not None:
        yield "orbitals.spin_layout", f"only spin-orbital files have a spin layout; basis is {orb.basis!r}"
    if orb.point_group is not None and orb.point_group not in POINT_GROUP_ORDER:
        yield (
            "orbitals.point_group",
            f"{orb.point_group!r} is not an abelian point group; expected one of {tuple(POINT_GROUP_ORDER)}",
        )
    if orb.irreps is not None:
        yield from _irreps_problems(orb)
    if orb.canonical is not None and not isinstance(orb.canonical, bool):
        yield "orbitals.canonical", f"expected true or false, got {orb.canonical!r}"
    for spin in ("alpha", "beta"):
        problem = _int_problem(getattr(ham.electrons, spin))
        if problem:
            yield f"electrons.{spin}", problem
    problem = _float_problem(ham.core_energy)
    if problem:
        yield "core_energy", problem
    if ham.core_energy_parts is not None:
        for name, value in ham.core_energy_parts.items():
            problem = _float_problem(value)
            if problem:
                yield f"core_energy_parts.{name}", problem
    yield from _two_electron_flag_problems(ham)
    for name, array in (("one_electron", ham.one_electron), ("two_electron", ham.two_electron.array)):
        problem = _dtype_problem(name, array)
        if problem:
            yield name, problem
            return
    two = ham.two_electron
    yield from shape_problems(
        basis=orb.basis,
        count=orb.count,
        storage=two.storage,
        notation=two.notation,
        one_shape=ham.one_electron.shape,
        one_dtype=ham.one_electron.dtype,
        two_shape=two.array.shape,
        two_dtype=two.array.dtype,
    )
    yield from _reference_problems(ham)
    yield from _provenance_problems(ham.provenance)
    if ham.title is not None and "\x00" in str(ham.title):
        yield "title", "contains a NUL character, which HDF5 strings cannot hold"
    if ham.checksum is not None and not (isinstance(ham.checksum, str) and CHECKSUM_PATTERN.match(ham.checksum)):
        yield "checksum", f"expected 'sha256:' and 64 lower-case hex digits, got {ham.checksum!r}"


def _irreps_problems(orb: Orbitals) -> Iterator[tuple[str, str]]:
    if len(orb.irreps) != orb.count:
        yield "orbitals.irreps", f"needs one irrep per orbital ({orb.count}), got {len(orb.irreps)}"
        return
    order = POINT_GROUP_ORDER.get(orb.point_group, 8)
    for p, irrep in enumerate(orb.irreps):
        problem = _int_problem(irrep, 0, order - 1)
        if problem:
            group = f" of point group {orb.point_group}" if orb.point_group else ""
            yield f"orbitals.irreps[{p}]", f"{problem} (irreps{group} are 0..{order - 1})"
            return


def _two_electron_flag_problems(ham: Hamiltonian) -> Iterator[tuple[str, str]]:
    two = ham.two_electron
    if two.notation not in NOTATIONS:
        yield "two_electron.notation", f"{two.notation!r} is not a notation; expected one of {NOTATIONS}"
    if two.storage not in STORAGES:
        yield "two_electron.storage", f"{two.storage!r} is not a storage; expected one of {STORAGES}"
    if two.interaction is not None and two.interaction not in INTERACTIONS:
        yield "two_electron.interaction", f"{two.interaction!r} is not an interaction; expected one of {INTERACTIONS}"
    if two.antisymmetrized is not None and not isinstance(two.antisymmetrized, bool):
        yield "two_electron.antisymmetrized", f"expected true or false, got {two.antisymmetrized!r}"
    if two.antisymmetrized and (ham.orbitals.basis != "spin-orbital" or two.notation != "physicist"):
        yield (
            "two_electron.antisymmetrized",
            "antisymmetrized integrals are defined for the spin-orbital basis in physicist "
            f"notation only; this file is {ham.orbitals.basis}, {two.notation}",
        )


def _reference_problems(ham: Hamiltonian) -> Iterator[tuple[str, str]]:
    seen = set()
    for i, ref in enumerate(ham.references):
        where = f"references[{i}]"
        if not isinstance(ref.label, str) or not ref.label:
            yield f"{where}.label", f"expected a non-empty string, got {ref.label!r}"
        elif "/" in ref.label or ref.label in (".", "..") or "\x00" in ref.label:
            yield f"{where}.label", f"{ref.label!r} cannot name an HDF5 group: no '/', NUL, '.' or '..'"
        elif ref.label in seen:
            yield f"{where}.label", f"label {ref.label!r} appears more than once; labels must be unique"
        seen.add(ref.label)
        if not isinstance(ref.method, str):
            yield f"{where}.method", f"expected a string, got {ref.method!r}"
        problem = _float_problem(ref.energy)
        if problem:
            yield f"{where}.energy", problem
        if ref.electrons is not None:
            for spin in ("alpha", "beta"):
                problem = _int_problem(getattr(ref.electrons, spin))
                if problem:
                    yield f"{where}.electrons.{spin}", problem
        for name, maximum in (("two_s", None), ("irrep", 7), ("root", None)):
            value = getattr(ref, name)
            problem = None if value is None else _int_problem(value, 0, maximum)
            if problem:
                yield f"{where}.{name}", problem
        if ref.tolerance is not None and (_float_problem(ref.tolerance) or not ref.tolerance > 0):
            yield f"{where}.tolerance", f"expected a positive number of hartree, got {ref.tolerance!r}"
        if ref.occupation is not None:
            yield from _occupation_problems(ham, where, ref.occupation)


def _provenance_problems(provenance) -> Iterator[tuple[str, str]]:
    """Provenance is free-form but container-safe: scalar values, and a list of steps as history."""
    if provenance is None:
        return
    if not isinstance(provenance, Mapping):
        yield "provenance", f"expected an object, got {type(provenance).__name__}"
        return
    for key, value in provenance.items():
        if key == "history":
            if not isinstance(value, list | tuple) or not all(isinstance(step, dict | str) for step in value):
                yield "provenance.history", "expected a list of steps (objects or strings)"
        elif isinstance(value, bool | int | float | np.integer | np.floating):
            continue
        elif isinstance(value, str):
            if "\x00" in value:
                yield f"provenance.{key}", "contains a NUL character, which HDF5 strings cannot hold"
        else:
            yield f"provenance.{key}", f"expected a string, number or boolean, got {type(value).__name__}"


def _occupation_problems(ham, where, occupation) -> Iterator[tuple[str, str]]:
    if len(occupation) != 2:
        yield f"{where}.occupation", "expected lists of occupied alpha and beta orbitals"
        return
    for spin, indices in zip(("alpha", "beta"), occupation, strict=True):
        for index in indices:
            problem = _int_problem(index, 0, ham.orbitals.count - 1)
            if problem:
                yield f"{where}.occupation.{spin}", f"orbital index {problem}"
                break
        if len(set(indices)) != len(indices):
            yield f"{where}.occupation.{spin}", f"an orbital is listed twice in {list(indices)}"
