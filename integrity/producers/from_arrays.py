"""Wrap plain arrays into a Hamiltonian, stating every convention explicitly.

Everything is judged at the door, before a file is written: the arrays'
dtypes (float64 or complex128; float32 and complex64 only when
``widen_float32`` says so, which the history records: the values keep the
precision float32 had), their shapes against each other (the one-electron
array fixes the orbital count, and a mismatch is reported with both
shapes), the electron counts against the orbitals, and the core energy and
reference energies (finite numbers).
"""

from __future__ import annotations

import math

import numpy as np

from integrity._version import __version__
from integrity.convert.history import dated, step_entry
from integrity.errors import FieldError
from integrity.io.npz import read_npz
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, Reference, TwoElectron, shape_problems
from integrity.model.indexing import one_electron_shape

#: storage read from the number of axes of two_electron, per basis
STORAGE_BY_NDIM = {
    "restricted": {4: "dense", 2: "pairs", 1: "unique"},
    "spin-orbital": {4: "dense", 2: "pairs", 1: "unique"},
    "unrestricted": {5: "dense", 3: "pairs"},
}
#: dtypes a file holds, and the narrower ones that may be widened to them on request
STORED = {"f": np.dtype(np.float64), "c": np.dtype(np.complex128)}
WIDENABLE = {np.dtype(np.float32): np.dtype(np.float64), np.dtype(np.complex64): np.dtype(np.complex128)}


def _dtype_problem(name: str, array: np.ndarray, widen: bool) -> str | None:
    dtype = array.dtype
    if dtype in STORED.values() or (dtype in WIDENABLE and widen):
        return None
    if dtype in WIDENABLE:
        return (
            f"dtype {dtype}; a file holds float64 or complex128, and widening keeps the precision of "
            f"{dtype} (about 7 digits): give --widen-float32 to store it as {WIDENABLE[dtype]} "
            "(recorded in the history)"
        )
    return f"dtype {dtype} is not allowed; {name} must be float64 or complex128"


def _finite(name: str, value, path) -> float:
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise FieldError(name, f"expected a number, got {value!r}", str(path)) from None
    if not math.isfinite(number):
        raise FieldError(name, f"expected a finite number, got {value!r}", str(path))
    return number


def _shape_text(one, two) -> str:
    return f"one_electron has shape {tuple(one.shape)} and two_electron {tuple(two.shape)}"


def wrap_arrays(
    path,
    *,
    notation,
    alpha,
    beta,
    basis,
    spin_layout=None,
    storage=None,
    core_energy=None,
    interaction=None,
    antisymmetrized=None,
    title=None,
    references=(),
    widen_float32: bool = False,
    date: str | None = None,
) -> Hamiltonian:
    """A Hamiltonian from an .npz of plain arrays and explicitly stated conventions.

    The core energy must come from the archive or the caller: a missing
    constant is one of the faults this project exists to catch. ``references``
    are :class:`~integrity.model.hamiltonian.Reference` values the file must
    reproduce; ``widen_float32`` stores float32 (complex64) arrays as float64
    (complex128), with a history entry dated ``date`` (YYYY-MM-DD; today, UTC,
    when None).

    Errors about the arguments (``alpha``, ``beta``, ``storage``) name them as
    their field; errors about the archive name the file.
    """
    arrays = read_npz(path)
    if "core_energy" in arrays and core_energy is not None:
        raise FieldError("core_energy", "given both in the archive and on the command line; give it once", str(path))
    if "core_energy" not in arrays and core_energy is None:
        raise FieldError(
            "core_energy", "not in the archive; state it with --core-energy (0 if there is none)", str(path)
        )
    raw = arrays["core_energy"] if "core_energy" in arrays else core_energy
    if np.ndim(raw) != 0:
        raise FieldError("core_energy", f"expected one number, got an array of shape {np.shape(raw)}", str(path))
    ecore = _finite("core_energy", raw, path)
    one, two = np.asarray(arrays["one_electron"]), np.asarray(arrays["two_electron"])
    widened = []
    for name, array in (("one_electron", one), ("two_electron", two)):
        problem = _dtype_problem(name, array, widen_float32)
        if problem:
            raise FieldError(name, problem, str(path))
        if array.dtype in WIDENABLE:
            widened.append((name, str(array.dtype), str(WIDENABLE[array.dtype])))
    one = one.astype(STORED[one.dtype.kind], copy=False)
    two = two.astype(STORED[two.dtype.kind], copy=False)
    count = _orbital_count(one, two, basis, path)
    if storage is None:
        storage = STORAGE_BY_NDIM[basis].get(two.ndim)
        if storage is None:
            raise FieldError(
                "two_electron",
                f"{two.ndim} axes fit no storage of a {basis} file ({_shape_text(one, two)})",
                str(path),
            )
    problems = shape_problems(
        basis=basis,
        count=count,
        storage=storage,
        notation=notation,
        one_shape=one.shape,
        one_dtype=one.dtype,
        two_shape=two.shape,
        two_dtype=two.dtype,
    )
    for field, reason in problems:
        raise FieldError(field, f"{reason} ({_shape_text(one, two)})", str(path))
    per_spin = count // 2 if basis == "spin-orbital" else count
    for name, electrons in (("alpha", alpha), ("beta", beta)):
        if electrons > per_spin:
            raise FieldError(
                name, f"{electrons} {name} electrons do not fit the {per_spin} orbitals per spin of the arrays"
            )
    irreps = None
    if "irreps" in arrays:
        irreps = np.asarray(arrays["irreps"])
        if irreps.ndim != 1 or irreps.dtype.kind not in "iu" or len(irreps) != count:
            raise FieldError(
                "irreps",
                f"expected {count} integers (one per orbital), got {irreps.dtype} of shape {irreps.shape}",
                str(path),
            )
        irreps = tuple(int(i) for i in irreps)
    provenance = {"producer": f"integrity {__version__} wrap", "source": str(path)}
    if widened:
        provenance["history"] = dated(
            [
                step_entry("widen", source, target, fingerprint_changed=False, array=name)
                for name, source, target in widened
            ],
            date,
        )
    try:
        return Hamiltonian(
            orbitals=Orbitals(count=count, basis=basis, spin_layout=spin_layout, irreps=irreps),
            electrons=Electrons(alpha, beta),
            core_energy=ecore,
            one_electron=one,
            two_electron=TwoElectron(
                two, notation=notation, storage=storage, interaction=interaction, antisymmetrized=antisymmetrized
            ),
            references=tuple(references),
            title=title,
            provenance=provenance,
        )
    except FieldError as err:
        raise err.in_file(path) from None


def _orbital_count(one, two, basis, path) -> int:
    """The orbital count the one-electron array states; refused when it is not a square matrix of the basis."""
    if one.ndim < 2 or one.shape[-1] != one.shape[-2] or one.shape[-1] < 1:
        raise FieldError("one_electron", f"expected a square matrix per spin, got shape {tuple(one.shape)}", str(path))
    count = one.shape[-1]
    if tuple(one.shape) != one_electron_shape(basis, count):
        raise FieldError(
            "one_electron",
            f"basis {basis!r} needs shape {one_electron_shape(basis, count)} ({_shape_text(one, two)})",
            str(path),
        )
    return count


def parse_reference(text: str) -> Reference:
    """A reference from ``LABEL=ENERGY[,KEY=VALUE...]``, keys ``method``, ``alpha``, ``beta``, ``two_s``,
    ``irrep``, ``root``, ``tolerance``; the method defaults to the label when it is ``hf`` or ``fci``.

    >>> parse_reference("fci=-1.1372838,two_s=0")
    Reference(label='fci', method='fci', energy=-1.1372838, electrons=None, two_s=0, irrep=None, root=None, \
occupation=None, tolerance=None)
    >>> parse_reference("triplet=-1.0,method=fci,alpha=2,beta=0,two_s=2").electrons
    Electrons(alpha=2, beta=0)
    """
    head, *rest = text.split(",")
    label, sep, energy_text = head.partition("=")
    label = label.strip()
    if not sep or not label:
        raise FieldError("reference", f"expected LABEL=ENERGY such as fci=-1.137, got {text!r}")
    energy = _reference_number(energy_text, "energy", text)
    keys = {}
    for item in rest:
        key, sep, value = item.partition("=")
        key = key.strip()
        if not sep or key not in ("method", "alpha", "beta", "two_s", "irrep", "root", "tolerance"):
            raise FieldError(
                "reference",
                f"{item!r} in {text!r}: expected KEY=VALUE with KEY one of method, alpha, beta, two_s, irrep, "
                "root, tolerance",
            )
        if key in keys:
            raise FieldError("reference", f"{key} is given twice in {text!r}")
        keys[key] = value.strip()
    method = keys.pop("method", label if label in ("hf", "fci") else None)
    if method not in ("hf", "fci"):
        raise FieldError("reference", f"{text!r}: give method=hf or method=fci (the label {label!r} names neither)")
    numbers = {
        key: _reference_integer(keys[key], key, text)
        for key in ("alpha", "beta", "two_s", "irrep", "root")
        if key in keys
    }
    if ("alpha" in numbers) != ("beta" in numbers):
        raise FieldError("reference", f"{text!r}: give both alpha and beta, or neither")
    tolerance = _reference_number(keys["tolerance"], "tolerance", text) if "tolerance" in keys else None
    if tolerance is not None and tolerance <= 0:
        raise FieldError("reference", f"{text!r}: tolerance must be greater than 0")
    return Reference(
        label=label,
        method=method,
        energy=energy,
        electrons=Electrons(numbers["alpha"], numbers["beta"]) if "alpha" in numbers else None,
        two_s=numbers.get("two_s"),
        irrep=numbers.get("irrep"),
        root=numbers.get("root"),
        tolerance=tolerance,
    )


def _reference_number(value: str, key: str, text: str) -> float:
    try:
        number = float(value)
    except ValueError:
        raise FieldError("reference", f"{key} {value!r} in {text!r} is not a number") from None
    if not math.isfinite(number):
        raise FieldError("reference", f"{key} {value!r} in {text!r} is not a finite number")
    return number


def _reference_integer(value: str, key: str, text: str) -> int:
    try:
        number = int(value)
    except ValueError:
        raise FieldError("reference", f"{key} {value!r} in {text!r} is not an integer") from None
    if number < 0:
        raise FieldError("reference", f"{key} {value!r} in {text!r} must not be negative")
    return number
